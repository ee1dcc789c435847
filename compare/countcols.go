package compare

import (
	"fmt"
	"math"
	"strings"

	"tandem/compare/table"
)

// CountsLikeWarning is the warning a result carries when its column looks
// like event counts compared with Gaussian pulls (see [CountsLike]).
const CountsLikeWarning = "the values look like event counts (non-negative integers with σ = √N, some bins below 20 events), where Gaussian pulls are not calibrated: compare them as counts (--counts, or counts = true in the protocol)"

// CountsLike reports whether a column with one symmetric uncertainty looks
// like event counts with Poisson errors: every value a non-negative
// integer, every σ equal to √N (to a relative 10⁻³, as printed tables
// round; a bin with N = 0 may give σ = 0 or 1), and some bin below 20
// events, where d/σ_d is far from normal.
func CountsLike(values, sigma []float64) bool {
	if len(values) == 0 || len(values) != len(sigma) {
		return false
	}
	sparse := false
	for i, v := range values {
		if !IsCount(v) {
			return false
		}
		s := sigma[i]
		if v == 0 {
			if s != 0 && s != 1 {
				return false
			}
		} else if r := math.Sqrt(v); math.Abs(s-r) > 1e-3*r {
			return false
		}
		sparse = sparse || v < sparseCount
	}
	return sparse
}

// countsLikePair is CountsLike on both sides of one symmetric source.
func countsLikePair(a, b *table.Table, sel Selection) bool {
	if len(sel.Errors) != 1 || len(sel.Minus) != 0 {
		return false
	}
	return CountsLike(a.Column(sel.Value), a.Column(sel.Errors[0])) && CountsLike(b.Column(sel.Value), b.Column(sel.Errors[0]))
}

// checkCounts refuses a value that is not an event count, naming its file,
// line and column.
func checkCounts(t *table.Table, name string, c []float64) error {
	for i, v := range c {
		if !IsCount(v) {
			what := "not an integer"
			switch {
			case v < 0:
				what = "negative"
			case v >= 1<<53:
				what = "too large to be held exactly"
			}
			e := table.Errorf(t.Source, binLine(t, i), 0, "bin %d: %q is %s (%s), but counts are non-negative integers", i+1, name, what, table.Format(v))
			e.Hint = "compare weighted or scaled values without --counts, with their uncertainty columns"
			return e
		}
	}
	return nil
}

// countsColumn compares one column as event counts: the exact tests of
// [CountTests], with pulls (N_A - N_B)/σ_d for display, σ_d² = N_A + N_B
// - 2 N_common.
func countsColumn(a, b *table.Table, sel Selection, opt *Options) (*Result, error) {
	e := opt.effective()
	for _, t := range []*table.Table{a, b} {
		if t.Column(sel.Value) == nil {
			return nil, table.Errorf(t.Source, 0, 0, "no value column %q (columns: %s)", sel.Value, strings.Join(t.Names, ", "))
		}
	}
	if e.SumW2 != "" {
		return weightedColumn(a, b, sel, opt)
	}
	ca, cb := a.Column(sel.Value), b.Column(sel.Value)
	if err := checkCounts(a, sel.Value, ca); err != nil {
		return nil, err
	}
	if err := checkCounts(b, sel.Value, cb); err != nil {
		return nil, err
	}
	var common []float64
	if e.Overlap.Enabled() {
		if e.Overlap.Count != "" && e.Overlap.Count != sel.Value {
			return nil, fmt.Errorf("in counts mode the events are the compared column %q; the overlap's count column %q is not used: leave it out", sel.Value, e.Overlap.Count)
		}
		tc, nc, err := column(a, b, e.Overlap.Common)
		if err != nil {
			return nil, err
		}
		if err := checkCounts(tc, e.Overlap.Common, nc); err != nil {
			return nil, err
		}
		for i := range nc {
			if nc[i] > math.Min(ca[i], cb[i]) {
				return nil, table.Errorf(tc.Source, binLine(tc, i), 0, "bin %d: %s common events, more than either chain selects (%s and %s)",
					i+1, table.Format(nc[i]), table.Format(ca[i]), table.Format(cb[i]))
			}
		}
		common = nc
	}
	cs, err := CountTests(CountInput{A: ca, B: cb, Common: common}, CountSettings{ExposureRatio: e.ExposureRatio, Samples: e.MCSamples, Seed: e.Seed})
	if err != nil {
		return nil, fmt.Errorf("column %q: %w", sel.Value, err)
	}
	n := len(ca)
	sa, sb := make([]float64, n), make([]float64, n)
	for i := range n {
		sa[i], sb[i] = math.Sqrt(ca[i]), math.Sqrt(cb[i])
	}
	src := errSource{name: "stat (√N)", downA: sa, upA: sa, downB: sb, upB: sb, declared: true}
	if common != nil {
		src.rhoBins = make([]float64, n)
		for i := range n {
			if ca[i] > 0 && cb[i] > 0 {
				src.rhoBins[i] = math.Min(1, common[i]/(sa[i]*sb[i]))
			}
		}
		src.perBin = fmt.Sprintf("overlap %s/√(N_A N_B)", e.Overlap.Common)
	}
	s := &sides{column: sel.Value, labelA: a.Source, labelB: b.Source, lo: a.Lo, hi: a.Hi, a: ca, b: cb, src: []errSource{src}}
	o := *opt
	o.Counts, o.ExposureRatio, o.MCSamples, o.Seed = false, 0, 0, 0
	o.Overlap, o.Default = Overlap{}, Number(0)
	r, err := compareSides(s, &o)
	if err != nil {
		return nil, err
	}
	r.Counts = cs
	r.Warnings = nil
	if k := n - cs.Informative; k > 0 {
		what := "no event in either chain"
		if cs.Shared {
			what = "no discordant event"
		}
		r.Warnings = append(r.Warnings, fmt.Sprintf("%d bin(s) with %s carry no information and are left out of the count tests (%d informative bins)", k, what, cs.Informative))
	}
	if cs.P0 != 0.5 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("exposure ratio %s (p0 = %s): the exact tests use it, the pulls (N_A - N_B)/σ_d do not", fmtG(e.ExposureRatio), fmtG(cs.P0)))
	}
	if want := max(e.MCSamples, DefaultMCSamples*boolInt(e.MCSamples == 0)); cs.Samples < want && cs.Informative > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("Monte Carlo reduced to %d samples for %d informative bins (the p-value stays valid; its error is %s)", cs.Samples, cs.Informative, fmtG(cs.MCError)))
	}
	if len(sel.Errors)+len(sel.Minus) > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("counts mode: the uncertainty columns (%s) are not used; the exact tests need only the counts", strings.Join(append(append([]string{}, sel.Errors...), sel.Minus...), ", ")))
	}
	if e.MaxPull > 0 {
		r.Warnings = append(r.Warnings, "the max |pull| limit is a raw tolerance, not corrected for the number of bins")
	}
	r.judgeCounts(e)
	return r, nil
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// judgeCounts replaces the Gaussian criteria by the count tests, and fills
// the contract's fields from them (see [Result.Counts]).
func (r *Result) judgeCounts(e Options) {
	cs := r.Counts
	r.Chi2, r.NDF, r.PValue = cs.G, cs.Informative, cs.GP
	r.KSStat, r.KSP, r.MaxPullP = cs.PITD, cs.PITP, cs.MinPSidak
	r.Runs, r.RunsPos, r.RunsNeg, r.RunsP = cs.Runs, cs.RunsPos, cs.RunsNeg, cs.RunsP
	c := Criterion{Name: CritCountBins, Kind: KindCheck, Value: float64(cs.Informative), Limit: 1, Op: ">=", Pass: cs.Informative > 0}
	if !c.Pass {
		c.Detail = "no bin holds an event that could tell the chains apart"
	}
	crit := []Criterion{c}
	if e.Alpha > 0 && cs.Informative > 0 {
		p := func(name string, v float64, note, why string) {
			crit = append(crit, Criterion{Name: name, Kind: KindPValue, Value: v, Limit: e.Alpha, Op: ">", Pass: true, Note: note, why: why})
		}
		p(CritCountG, cs.GP, fmt.Sprintf("%d samples, seed %d, Monte Carlo error %s", cs.Samples, cs.Seed, fmtG(cs.MCError)),
			fmt.Sprintf("G = %s over %d informative bins is unlikely for agreeing counts", fmtG(cs.G), cs.Informative))
		p(CritCountPIT, cs.PITP, fmt.Sprintf("seed %d", cs.Seed),
			fmt.Sprintf("the per-bin outcomes are not distributed as agreeing counts: D = %s", fmtG(cs.PITD)))
		p(CritRuns, cs.RunsP, "",
			fmt.Sprintf("%d runs in %d positive and %d negative deviations: a coherent trend", cs.Runs, cs.RunsPos, cs.RunsNeg))
		p(CritCountMinP, cs.MinPSidak, "",
			fmt.Sprintf("bin %d (%s test p = %s) is unlikely among %d informative bins", cs.MinBin+1, cs.BinTests[max(cs.MinBin, 0)], fmtG(cs.MinP), cs.Informative))
	}
	crit = append(crit, r.tolerances(e, true)...)
	r.Criteria = crit
	r.Alpha = e.Alpha
	r.settle()
}

// weightedColumn compares one column of weighted counts (sums of weights,
// with the sums of squared weights in column opt.SumW2) by [WeightedTest].
func weightedColumn(a, b *table.Table, sel Selection, opt *Options) (*Result, error) {
	e := opt.effective()
	var w, s2 [2][]float64
	for k, t := range []*table.Table{a, b} {
		w[k], s2[k] = t.Column(sel.Value), t.Column(e.SumW2)
		if s2[k] == nil {
			return nil, table.Errorf(t.Source, 0, 0, "no sum-of-squared-weights column %q (columns: %s)", e.SumW2, strings.Join(t.Names, ", "))
		}
		for i := range w[k] {
			v, q := w[k][i], s2[k][i]
			bad := ""
			switch {
			case v < 0:
				bad = fmt.Sprintf("sum of weights %q is negative (%s)", sel.Value, table.Format(v))
			case q < 0:
				bad = fmt.Sprintf("sum of squared weights %q is negative (%s)", e.SumW2, table.Format(q))
			case v > 0 && q == 0:
				bad = fmt.Sprintf("sum of weights %s with a zero sum of squared weights %q", table.Format(v), e.SumW2)
			}
			if bad != "" {
				return nil, table.Errorf(t.Source, binLine(t, i), 0, "bin %d: %s", i+1, bad)
			}
		}
	}
	ws, err := WeightedTest(w[0], s2[0], w[1], s2[1], e.ExposureRatio)
	if err != nil {
		return nil, fmt.Errorf("column %q: %w", sel.Value, err)
	}
	n := len(w[0])
	sd := [2][]float64{make([]float64, n), make([]float64, n)}
	cs := &CountStats{P0: 0.5, BinTests: make([]string, n), BinP: make([]float64, n), MinBin: -1, Weighted: ws}
	r0 := e.ExposureRatio
	if r0 == 0 {
		r0 = 1
	}
	cs.P0 = r0 / (1 + r0)
	nan := math.NaN()
	cs.G, cs.GP, cs.MCError, cs.PITD, cs.PITP, cs.MinP, cs.MinPSidak, cs.RunsP = nan, nan, nan, nan, nan, nan, nan, nan
	for i := range n {
		sd[0][i], sd[1][i] = math.Sqrt(s2[0][i]), math.Sqrt(s2[1][i])
		cs.BinP[i] = nan
		cs.BinTests[i] = TestWeighted
		if s2[0][i] == 0 && s2[1][i] == 0 {
			cs.BinTests[i] = TestNone
			continue
		}
		cs.Informative++
	}
	src := errSource{name: "stat (√Σw²)", downA: sd[0], upA: sd[0], downB: sd[1], upB: sd[1], declared: true}
	s := &sides{column: sel.Value, labelA: a.Source, labelB: b.Source, lo: a.Lo, hi: a.Hi, a: w[0], b: w[1], src: []errSource{src}}
	o := *opt
	o.Counts, o.ExposureRatio, o.MCSamples, o.Seed, o.SumW2 = false, 0, 0, 0, ""
	o.Overlap, o.Default = Overlap{}, Number(0)
	r, err := compareSides(s, &o)
	if err != nil {
		return nil, err
	}
	r.Counts = cs
	r.Warnings = nil
	if k := n - cs.Informative; k > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%d bin(s) with no weight in either chain carry no information and are left out (%d informative bins)", k, cs.Informative))
	}
	if ws.MinEffective < 10 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("weighted counts: a bin holds only %s effective events (w²/Σw²); the weighted χ² and normalisation tests are asymptotic", fmtG(ws.MinEffective)))
	}
	if e.MaxPull > 0 {
		r.Warnings = append(r.Warnings, "the max |pull| limit is a raw tolerance, not corrected for the number of bins")
	}
	r.Chi2, r.NDF, r.PValue = ws.Chi2, ws.NDF, ws.P
	r.KSStat, r.KSP, r.MaxPullP = nan, nan, nan
	c := Criterion{Name: CritCountBins, Kind: KindCheck, Value: float64(cs.Informative), Limit: 2, Op: ">=", Pass: cs.Informative >= 2 && !math.IsNaN(ws.P)}
	if !c.Pass {
		c.Detail = "the weighted χ² needs weight in both chains and in at least two bins"
	}
	crit := []Criterion{c}
	if e.Alpha > 0 && c.Pass {
		crit = append(crit,
			Criterion{Name: CritWeightedChi2, Kind: KindPValue, Value: ws.P, Limit: e.Alpha, Op: ">", Pass: true, Note: "asymptotic; shape only",
				why: fmt.Sprintf("the shapes differ: X² = %s for %d degrees of freedom", fmtG(ws.Chi2), ws.NDF)},
			Criterion{Name: CritWeightedNorm, Kind: KindPValue, Value: ws.NormP, Limit: e.Alpha, Op: ">", Pass: true, Note: "asymptotic",
				why: fmt.Sprintf("the totals differ by %s standard deviations", fmtG(ws.Z))})
	}
	crit = append(crit, r.tolerances(e, true)...)
	r.Criteria = crit
	r.Alpha = e.Alpha
	r.settle()
	return r, nil
}
