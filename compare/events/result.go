package events

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"

	"tandem/compare/stats"
)

// Step is the comparison at one cut-flow step. A and B count the events of
// each table passing this cut and every cut before it; Both, OnlyA and OnlyB
// split the common events; ANotInB and BNotInA count the passing events the
// other table does not have.
type Step struct {
	Cut     string `json:"cut"`
	A       int64  `json:"a"`
	B       int64  `json:"b"`
	Both    int64  `json:"both"`
	OnlyA   int64  `json:"only_a"`
	OnlyB   int64  `json:"only_b"`
	ANotInB int64  `json:"a_not_in_b"`
	BNotInA int64  `json:"b_not_in_a"`
	// PValue is McNemar's exact two-sided p-value on OnlyA and OnlyB;
	// Adjusted is Holm's adjustment over the steps.
	PValue   float64 `json:"p_value"`
	Adjusted float64 `json:"p_value_adjusted"`
	// EffA and EffB are the step efficiencies (passing this step among
	// those passing the previous one) with Clopper–Pearson intervals.
	EffA, EffB Efficiency `json:"-"`
	Differs    bool       `json:"differs"`
}

// Efficiency is k of n with a Clopper–Pearson interval.
type Efficiency struct {
	K, N          int64
	Value, Lo, Hi float64
}

// QuantileLevels are the levels of the quantiles of the relative
// differences shown in reports (see [Quantile]).
var QuantileLevels = []float64{0.5, 0.9, 0.99, 0.999}

// VarResult is the derived view of one variable.
type VarResult struct {
	VarSpec
	VarStats
	Fraction  float64   `json:"fraction_outside"`
	Quantiles []float64 `json:"quantiles"`
	Pass      bool      `json:"pass"`
}

// Result is the derived view of a summary that reports show.
type Result struct {
	*Summary
	Variables []VarResult
	Steps     []Step
	// PValue is McNemar's test on the unmatched events (A only against B
	// only), shown for information: tables may cover different samples.
	PValue float64
	// FirstSplit is the first step whose test fails (-1: none) and
	// FirstDiscordant the first step with any discordant event (-1: none).
	FirstSplit, FirstDiscordant int
	// Rho is N_common/√(N_A·N_B) per bin (0 when a count is 0).
	Rho  []float64
	Pass bool
	// Failures lists why the result fails, in words.
	Failures []string
}

func eff(k, n int64, cl float64) Efficiency {
	e := Efficiency{K: k, N: n, Value: math.NaN()}
	if n > 0 {
		e.Value = float64(k) / float64(n)
	}
	e.Lo, e.Hi = stats.ClopperPearson(k, n, cl)
	return e
}

// Quantile returns an upper bound of the q-quantile of the relative
// differences counted in h, whose largest value is largest: with n the
// count and k = ⌈q·n⌉, the k-th smallest value lies in the first bin where the
// cumulative count reaches k, so it is at most that bin's upper edge, and
// at most the largest value. The bound is therefore
//
//	min(upper edge of that bin, largest)
//
// 0 when that bin is r = 0, and the largest value itself when the k-th
// value lies in the last occupied bin. It never exceeds the largest value,
// never falls below the smallest value, and is at most one bin width (a
// factor 10^(1/HistPerDecade)) above the exact quantile. NaN when h is
// empty.
func Quantile(h []int64, q, largest float64) float64 {
	var n int64
	last := -1
	for i, c := range h {
		n += c
		if c > 0 {
			last = i
		}
	}
	if n == 0 {
		return math.NaN()
	}
	need := max(1, int64(math.Ceil(q*float64(n))))
	var run int64
	for i, c := range h {
		run += c
		if run >= need && c > 0 {
			switch {
			case i == 0:
				return 0
			case i == last:
				return largest
			}
			return math.Min(HistEdge(i+1), largest)
		}
	}
	return largest
}

// Evaluate derives the per-step tests, the per-variable view and the
// verdict from a summary.
func Evaluate(s *Summary) *Result {
	r := &Result{Summary: s, FirstSplit: -1, FirstDiscordant: -1, Pass: true}
	for j, v := range s.Vars {
		st := s.Stats[j]
		vr := VarResult{VarSpec: v, VarStats: st, Pass: st.Outside == 0, Fraction: math.NaN()}
		if st.Compared > 0 {
			vr.Fraction = float64(st.Outside) / float64(st.Compared)
		}
		for _, q := range QuantileLevels {
			vr.Quantiles = append(vr.Quantiles, Quantile(st.Hist, q, st.MaxRel.Value))
		}
		if !vr.Pass {
			r.Pass = false
			r.Failures = append(r.Failures, fmt.Sprintf("%s: %d of %d common events outside tolerance", v.Name, st.Outside, st.Compared))
		}
		r.Variables = append(r.Variables, vr)
	}
	nc := len(s.Cuts)
	prevA, prevB := s.RowsA, s.RowsB
	var ps []float64
	for k := 0; k < nc; k++ {
		st := Step{Cut: s.Cuts[k]}
		for p := k + 1; p <= nc; p++ {
			st.A += s.PassA[p]
			st.B += s.PassB[p]
		}
		for sa := 0; sa <= nc; sa++ {
			for sb := 0; sb <= nc; sb++ {
				n := s.Pairs[sa*(nc+1)+sb]
				switch {
				case sa > k && sb > k:
					st.Both += n
				case sa > k:
					st.OnlyA += n
				case sb > k:
					st.OnlyB += n
				}
			}
		}
		st.ANotInB = st.A - st.Both - st.OnlyA
		st.BNotInA = st.B - st.Both - st.OnlyB
		st.PValue = stats.McNemar(st.OnlyA, st.OnlyB)
		st.EffA, st.EffB = eff(st.A, prevA, s.CL), eff(st.B, prevB, s.CL)
		prevA, prevB = st.A, st.B
		if r.FirstDiscordant < 0 && st.OnlyA+st.OnlyB > 0 {
			r.FirstDiscordant = k
		}
		ps = append(ps, st.PValue)
		r.Steps = append(r.Steps, st)
	}
	for k, p := range stats.Holm(ps) {
		st := &r.Steps[k]
		st.Adjusted = p
		if p < s.Alpha {
			st.Differs = true
			r.Pass = false
			if r.FirstSplit < 0 {
				r.FirstSplit = k
			}
			r.Failures = append(r.Failures, fmt.Sprintf("cut %s: the chains keep different events (McNemar p = %.3g, Holm-adjusted %.3g < α = %g)",
				st.Cut, st.PValue, p, s.Alpha))
		}
	}
	r.PValue = stats.McNemar(s.OnlyA, s.OnlyB)
	for _, b := range s.Bins {
		rho := 0.0
		if b.NA > 0 && b.NB > 0 {
			rho = float64(b.NCommon) / math.Sqrt(float64(b.NA)) / math.Sqrt(float64(b.NB))
		}
		r.Rho = append(r.Rho, rho)
	}
	if s.Common == 0 && (len(s.Vars) > 0 || nc > 0) {
		r.Pass = false
		r.Failures = append(r.Failures, "no common events: nothing could be compared")
	}
	return r
}

// WriteOverlap writes the per-bin table the binned comparison reads as a
// correlation column: lo, hi, then n_a, n_b, n_common and rho, or only rho
// when the binning variable is blinded (the counts would show the blinded
// distribution).
func (r *Result) WriteOverlap(w io.Writer) error {
	if r.Binning == nil {
		return fmt.Errorf("no binning was asked for")
	}
	bw := bufio.NewWriter(w)
	hidden := r.Binning.Hidden
	if hidden {
		bw.WriteString("lo,hi,rho\n")
	} else {
		bw.WriteString("lo,hi,n_a,n_b,n_common,rho\n")
	}
	e := r.Binning.Edges
	for i, b := range r.Bins {
		line := strconv.FormatFloat(e[i], 'g', -1, 64) + "," + strconv.FormatFloat(e[i+1], 'g', -1, 64)
		if !hidden {
			line += fmt.Sprintf(",%d,%d,%d", b.NA, b.NB, b.NCommon)
		}
		line += "," + strconv.FormatFloat(r.Rho[i], 'g', -1, 64) + "\n"
		bw.WriteString(line)
	}
	return bw.Flush()
}

// WriteOverlapIfBinned writes the overlap table when a binning was asked
// for, and nothing otherwise.
func (r *Result) WriteOverlapIfBinned(w io.Writer) error {
	if r.Binning == nil {
		return nil
	}
	return r.WriteOverlap(w)
}

// Merge adds partition summaries. They must describe the same comparison
// (keys, variables and tolerances, cuts, binning, α and level); the
// counts, histograms and per-bin counts add, maxima and the bounded lists
// keep their best entries. Warnings name partitions whose key ranges
// overlap: an event split across two partitions counts as unmatched in both.
func Merge(parts []*Summary, names []string) (*Summary, []string, error) {
	if len(parts) == 0 {
		return nil, nil, fmt.Errorf("nothing to merge")
	}
	first := parts[0]
	out := &Summary{Format: FormatSummary, LabelA: first.LabelA, LabelB: first.LabelB, Keys: first.Keys,
		Vars: first.Vars, Cuts: first.Cuts, Alpha: first.Alpha, CL: first.CL,
		maxWorst: DefaultWorst, maxSample: DefaultSample}
	if first.Binning != nil {
		b := *first.Binning
		out.Binning = &b
		out.Bins = make([]BinCounts, len(b.Edges)-1)
	}
	nc := len(first.Cuts) + 1
	out.PassA, out.PassB, out.Pairs = make([]int64, nc), make([]int64, nc), make([]int64, nc*nc)
	for range first.Vars {
		out.Stats = append(out.Stats, VarStats{Hist: make([]int64, HistBins+2)})
	}
	var warns []string
	seen := map[[32]byte]int{}
	for i, p := range parts {
		if err := sameShape(first, p); err != nil {
			return nil, nil, fmt.Errorf("%s: %v (differs from %s)", names[i], err, names[0])
		}
		var enc bytes.Buffer
		if err := WriteSummary(&enc, p); err != nil {
			return nil, nil, err
		}
		d := sha256.Sum256(enc.Bytes())
		if j, dup := seen[d]; dup {
			return nil, nil, &DuplicateError{First: names[j], Second: names[i]}
		}
		seen[d] = i
		for j := 0; j < i; j++ {
			q := parts[j]
			if p.KeyMin != nil && q.KeyMin != nil && compareKeys(p.KeyMin, q.KeyMax) <= 0 && compareKeys(q.KeyMin, p.KeyMax) <= 0 {
				warns = append(warns, fmt.Sprintf("%s and %s overlap in key range: events split between them count as unmatched", names[j], names[i]))
			}
		}
		out.Parts += p.Parts
		out.RowsA += p.RowsA
		out.RowsB += p.RowsB
		out.Common += p.Common
		out.OnlyA += p.OnlyA
		out.OnlyB += p.OnlyB
		out.Spilled = out.Spilled || p.Spilled
		out.SpilledBytes += p.SpilledBytes
		if p.KeyMin != nil {
			out.seeKey(p.KeyMin)
			out.seeKey(p.KeyMax)
		}
		for j := range p.Stats {
			o, q := &out.Stats[j], p.Stats[j]
			o.Compared += q.Compared
			o.Outside += q.Outside
			o.NonFinite += q.NonFinite
			o.Above += q.Above
			o.Below += q.Below
			o.MaxAbs.merge(q.MaxAbs)
			o.MaxRel.merge(q.MaxRel)
			for k, c := range q.Hist {
				o.Hist[k] += c
			}
		}
		addInto(out.PassA, p.PassA)
		addInto(out.PassB, p.PassB)
		addInto(out.Pairs, p.Pairs)
		for k, b := range p.Bins {
			out.Bins[k].NA += b.NA
			out.Bins[k].NB += b.NB
			out.Bins[k].NCommon += b.NCommon
		}
		out.OutsideBins[0] += p.OutsideBins[0]
		out.OutsideBins[1] += p.OutsideBins[1]
		for k := range p.Worst {
			out.Worst = offerEvent(out.Worst, &p.Worst[k], out.maxWorst)
		}
		for _, k := range p.SampleA {
			out.SampleA = offerKey(out.SampleA, k, out.maxSample)
		}
		for _, k := range p.SampleB {
			out.SampleB = offerKey(out.SampleB, k, out.maxSample)
		}
	}
	return out, warns, nil
}

// DuplicateError is returned by [Merge] when two summaries are the same:
// merging them would count every event twice.
type DuplicateError struct{ First, Second string }

func (e *DuplicateError) Error() string {
	if e.First == e.Second {
		return fmt.Sprintf("%s is named twice: merging it again would count every event twice", e.First)
	}
	return fmt.Sprintf("%s and %s hold the same summary: merging both would count every event twice", e.First, e.Second)
}

func addInto(dst, src []int64) {
	for i, v := range src {
		dst[i] += v
	}
}

// sameShape checks that two summaries describe the same comparison and
// that their arrays have the sizes it implies (a summary file is input).
func sameShape(a, b *Summary) error {
	switch {
	case b.Format != FormatSummary:
		return fmt.Errorf("not a %s file", FormatSummary)
	case !slices.Equal(a.Keys, b.Keys):
		return fmt.Errorf("key columns %v", b.Keys)
	case !slices.Equal(a.Cuts, b.Cuts):
		return fmt.Errorf("cuts %v", b.Cuts)
	case !slices.Equal(a.Vars, b.Vars):
		return fmt.Errorf("variables or tolerances")
	case a.Alpha != b.Alpha || a.CL != b.CL:
		return fmt.Errorf("alpha or confidence level")
	case (a.Binning == nil) != (b.Binning == nil):
		return fmt.Errorf("binning")
	case a.Binning != nil && (a.Binning.Var != b.Binning.Var || !slices.Equal(a.Binning.Edges, b.Binning.Edges) || a.Binning.Hidden != b.Binning.Hidden):
		return fmt.Errorf("binning")
	}
	nc := len(b.Cuts) + 1
	if len(b.PassA) != nc || len(b.PassB) != nc || len(b.Pairs) != nc*nc || len(b.Stats) != len(b.Vars) ||
		(b.Binning != nil && len(b.Bins) != len(b.Binning.Edges)-1) || b.Parts < 1 {
		return fmt.Errorf("malformed summary: array sizes do not match its columns")
	}
	for _, st := range b.Stats {
		if len(st.Hist) != HistBins+2 {
			return fmt.Errorf("malformed summary: histogram has %d bins", len(st.Hist))
		}
	}
	for _, e := range b.Worst {
		if len(e.Key) != len(b.Keys) || len(e.A) != len(b.Vars) || len(e.B) != len(b.Vars) {
			return fmt.Errorf("malformed summary: event list does not match its columns")
		}
	}
	for _, k := range append(slices.Clone(b.SampleA), b.SampleB...) {
		if len(k) != len(b.Keys) {
			return fmt.Errorf("malformed summary: key list does not match its columns")
		}
	}
	if (b.KeyMin == nil) != (b.KeyMax == nil) || (b.KeyMin != nil && (len(b.KeyMin) != len(b.Keys) || len(b.KeyMax) != len(b.Keys))) {
		return fmt.Errorf("malformed summary: key range does not match its columns")
	}
	return nil
}
