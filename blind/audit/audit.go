package audit

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"
)

// DefaultThreshold: an attack whose precision is below it breaks the
// blinding (a tenth of the interval the declared ranges leave open).
const DefaultThreshold = 0.10

// Column is one blinded column as the blind step is about to publish it.
type Column struct {
	Observable, Column string
	Lo, Hi             []float64   // bin edges
	True               []float64   // true values vᵢ (the blind step knows them)
	Blinded            []float64   // published v′ᵢ
	BlindedErr         [][]float64 // published σ′ₖ,ᵢ, one slice per uncertainty source k
	Scale, Shift       [2]float64  // declared ranges of s and o
}

// Finding is the result of one attack on one column (or pair of columns).
type Finding struct {
	Observable, Column, Attack string
	// Precision is the median over bins of |v̂ᵢ − vᵢ| / Dᵢ, where Dᵢ is the
	// smaller of Wᵢ, the width of the interval of true values consistent
	// with v′ᵢ under the declared ranges, and the size of the value (see
	// the package documentation).
	Precision float64
	Broken    bool   // Precision < threshold
	Detail    string // what was recovered, for the message; never a value
}

// Estimate is what an attack returns: v̂ᵢ for every bin (NaN where the
// attack gives nothing for that bin) and a description of the variant.
type Estimate struct {
	V       []float64
	Variant string
}

// Attack names, as they appear in [Finding.Attack].
const (
	NameVarianceLine      = "variance line"
	NameSignalToError     = "squared value-to-error ratio"
	NameDeclaredBound     = "bin-by-bin declared-range bound"
	NameConstantRegion    = "constant region"
	NameRelativeErrorLine = "relative-error line"
	NameSharedRatio       = "ratio between columns"
	NameInput             = "input check"
)

// Run scores every attack on every column, and the ratio attack on every
// pair of columns with identical bin edges, except pairs with the same
// observable and column name (two teams' tables of one column). A column whose slices do not
// line up gets a single Broken finding for [NameInput], so that a caller
// that refuses on Broken fails closed. A threshold ≤ 0 or NaN means
// [DefaultThreshold]. Attacks that do not apply (no uncertainties, fewer
// than three bins for a fit) give no finding.
func Run(cols []Column, threshold float64) []Finding {
	if !(threshold > 0) {
		threshold = DefaultThreshold
	}
	var out []Finding
	valid := make([]bool, len(cols))
	for ci, c := range cols {
		if why := check(c); why != "" {
			out = append(out, Finding{Observable: c.Observable, Column: c.Column, Attack: NameInput,
				Precision: math.NaN(), Broken: true, Detail: why})
			continue
		}
		valid[ci] = true
		w := scales(c)
		score := func(name string, ests []Estimate) {
			if f, ok := best(c.Observable, c.Column, name, ests, c.True, w, threshold); ok {
				out = append(out, f)
			}
		}
		var line, ratio, bound, rel, plateau []Estimate
		for k := range sources(c) {
			e, label := errs(c, k)
			try := func(list *[]Estimate, attack func(Column, []float64) (Estimate, bool)) {
				est, ok := attack(c, e)
				*list = appendOK(*list, label, est, ok)
			}
			try(&line, VarianceLine)
			try(&ratio, SignalToError)
			try(&bound, DeclaredBound)
			try(&rel, RelativeErrorLine)
		}
		for _, p := range PlateauValues {
			est, ok := ConstantRegion(c, p)
			plateau = appendOK(plateau, "", est, ok)
		}
		score(NameVarianceLine, line)
		score(NameSignalToError, ratio)
		score(NameDeclaredBound, bound)
		score(NameConstantRegion, plateau)
		score(NameRelativeErrorLine, rel)
	}
	for i := range cols {
		for j := i + 1; j < len(cols); j++ {
			a, b := cols[i], cols[j]
			if !valid[i] || !valid[j] || !slices.Equal(a.Lo, b.Lo) || !slices.Equal(a.Hi, b.Hi) {
				continue
			}
			if a.Observable == b.Observable && a.Column == b.Column {
				// Two teams' tables of one column: in the common map they
				// share it on purpose (see the package documentation).
				continue
			}
			if f, ok := ratioFinding(a, b, threshold); ok {
				out = append(out, f)
			}
		}
	}
	return out
}

// appendOK adds e, when the attack applied, with label in front of its
// variant.
func appendOK(list []Estimate, label string, e Estimate, ok bool) []Estimate {
	if !ok {
		return list
	}
	switch {
	case label == "":
	case e.Variant == "":
		e.Variant = label
	default:
		e.Variant = label + ", " + e.Variant
	}
	return append(list, e)
}

// check returns why a column cannot be audited, or "".
func check(c Column) string {
	n := len(c.Blinded)
	if n == 0 {
		return "the column has no bins"
	}
	if len(c.True) != n || len(c.Lo) != n || len(c.Hi) != n {
		return fmt.Sprintf("the column's slices differ in length (%d true values, %d blinded, %d and %d edges)", len(c.True), n, len(c.Lo), len(c.Hi))
	}
	for k, e := range c.BlindedErr {
		if len(e) != n {
			return fmt.Sprintf("uncertainty source %d has %d values for %d bins", k+1, len(e), n)
		}
	}
	for _, r := range [][2]float64{c.Scale, c.Shift} {
		if !isFinite(r[0]) || !isFinite(r[1]) {
			return "a declared range is not finite"
		}
	}
	return ""
}

func isFinite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// span returns the declared range r in increasing order.
func span(r [2]float64) (lo, hi float64) {
	return min(r[0], r[1]), max(r[0], r[1])
}

// sources is the number of uncertainty variants of c: each source, and
// their sum in quadrature when there are two or more.
func sources(c Column) int {
	switch n := len(c.BlindedErr); n {
	case 0, 1:
		return n
	default:
		return n + 1
	}
}

// errs returns variant k of the uncertainties with its label: source k,
// or for k = len(BlindedErr) the quadrature sum √(Σₖ σ′ₖ,ᵢ²).
func errs(c Column, k int) ([]float64, string) {
	if k < len(c.BlindedErr) {
		return c.BlindedErr[k], fmt.Sprintf("uncertainty source %d", k+1)
	}
	out := make([]float64, len(c.Blinded))
	for i := range out {
		var parts []float64
		for _, e := range c.BlindedErr {
			parts = append(parts, e[i])
		}
		out[i] = hypot(parts)
	}
	return out, "all uncertainty sources in quadrature"
}

func hypot(xs []float64) float64 {
	h := 0.0
	for _, x := range xs {
		h = math.Hypot(h, x)
	}
	return h
}

// interval returns the interval Iᵢ of true values consistent with v′
// under the declared ranges: the extremes of (v′ − o)/s over the corners.
// It is infinite when 0 ∈ S.
func interval(vb float64, scale, shift [2]float64) (lo, hi float64) {
	sl, sh := span(scale)
	if sl <= 0 && sh >= 0 {
		return math.Inf(-1), math.Inf(1)
	}
	ol, oh := span(shift)
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, s := range []float64{sl, sh} {
		for _, o := range []float64{ol, oh} {
			x := (vb - o) / s
			lo, hi = min(lo, x), max(hi, x)
		}
	}
	return lo, hi
}

// widths returns Wᵢ for every bin of c.
func widths(c Column) []float64 {
	w := make([]float64, len(c.Blinded))
	for i, vb := range c.Blinded {
		lo, hi := interval(vb, c.Scale, c.Shift)
		w[i] = hi - lo
	}
	return w
}

// scales returns Dᵢ = min(Wᵢ, max(|vᵢ|, m)) for every bin of c, m the
// median of |vⱼ| over the column: the yardstick of the precision.
func scales(c Column) []float64 {
	return yardstick(widths(c), c.True)
}

// yardstick returns min(wᵢ, max(|tᵢ|, m)), m the median of the finite
// |tⱼ|.
func yardstick(w, truth []float64) []float64 {
	var mags []float64
	for _, v := range truth {
		if isFinite(v) {
			mags = append(mags, math.Abs(v))
		}
	}
	d := slices.Clone(w)
	if len(mags) == 0 {
		return d
	}
	m := median(mags)
	for i, v := range truth {
		d[i] = math.Min(d[i], math.Max(math.Abs(v), m))
	}
	return d
}

// scored is the precision of one estimate and the figures for Detail.
type scored struct {
	precision, relErr float64
	bins              int
}

// score computes P = median |v̂ᵢ − vᵢ|/Dᵢ over the usable bins.
func score(est, truth, w []float64) (scored, bool) {
	var ratios, rel []float64
	for i, v := range est {
		t := truth[i]
		if !isFinite(v) || !isFinite(t) || !isFinite(w[i]) || w[i] < 0 {
			continue
		}
		d := math.Abs(v - t)
		switch {
		case w[i] > 0:
			ratios = append(ratios, d/w[i])
		case d <= 1e-12*math.Max(1, math.Abs(t)):
			ratios = append(ratios, 0)
		default:
			ratios = append(ratios, math.Inf(1))
		}
		if t != 0 {
			rel = append(rel, d/math.Abs(t))
		}
	}
	if len(ratios) == 0 {
		return scored{}, false
	}
	s := scored{precision: median(ratios), relErr: math.NaN(), bins: len(ratios)}
	if len(rel) > 0 {
		s.relErr = median(rel)
	}
	return s, true
}

// median is the lower median of xs (gonum stat.Quantile, Empirical).
func median(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	return stat.Quantile(0.5, stat.Empirical, s, nil)
}

// best scores every estimate and returns the finding of the most precise.
func best(obs, col, name string, ests []Estimate, truth, w []float64, threshold float64) (Finding, bool) {
	var f Finding
	found := false
	for _, e := range ests {
		s, ok := score(e.V, truth, w)
		if !ok || (found && !(s.precision < f.Precision)) {
			continue
		}
		found = true
		f = Finding{Observable: obs, Column: col, Attack: name, Precision: s.precision,
			Broken: s.precision < threshold, Detail: describe(e.Variant, s, len(truth))}
	}
	return f, found
}

func describe(variant string, s scored, n int) string {
	d := fmt.Sprintf("%s: %d of %d bins estimated, median error %.3g of the smaller of the value and the interval the declared ranges leave open", variant, s.bins, n, s.precision)
	if !math.IsNaN(s.relErr) {
		d += fmt.Sprintf(" (median relative error %.3g%%)", 100*s.relErr)
	}
	return d
}
