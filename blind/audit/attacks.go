package audit

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"
)

// PlateauValues are the values [ConstantRegion] assumes for a plateau: an
// efficiency or acceptance at 1, and an empty region at 0.
var PlateauValues = []float64{1, 0}

// finitePairs returns the bins where both x and y are finite.
func finitePairs(x, y []float64) (xs, ys []float64) {
	for i := range x {
		if isFinite(x[i]) && isFinite(y[i]) {
			xs = append(xs, x[i])
			ys = append(ys, y[i])
		}
	}
	return xs, ys
}

// line fits y = α + β·x by least squares (gonum stat.LinearRegression,
// unweighted) over the finite bins; it needs three bins and two distinct x.
func line(x, y []float64) (alpha, beta float64, ok bool) {
	xs, ys := finitePairs(x, y)
	if len(xs) < 3 || stat.Variance(xs, nil) == 0 {
		return 0, 0, false
	}
	alpha, beta = stat.LinearRegression(xs, ys, nil, false)
	return alpha, beta, isFinite(alpha) && isFinite(beta) && beta != 0
}

func nans(n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = math.NaN()
	}
	return v
}

// VarianceLine is the straight-line fit of σ′² against v′. Under one
// global map of a counting column (σᵢ² = c·Nᵢ, c = 1 for raw counts),
//
//	v′ᵢ = s·Nᵢ + o,  σ′ᵢ² = c·s²·Nᵢ  ⇒  σ′ᵢ² = c·s·(v′ᵢ − o),
//
// so the least-squares line σ′² = α + β·v′ gives ŝ = β/c and ô = −α/β,
// and then
//
//	v̂ᵢ = (v′ᵢ − ô) / ŝ,
//
// with c = 1. The shift ô does not depend on c. The fit needs three bins
// with finite v′ and σ′ and two distinct v′.
func VarianceLine(c Column, e []float64) (Estimate, bool) {
	y := make([]float64, len(e))
	for i, x := range e {
		y[i] = x * x
	}
	alpha, beta, ok := line(c.Blinded, y)
	if !ok {
		return Estimate{}, false
	}
	s, o := beta, -alpha/beta
	v := nans(len(c.Blinded))
	for i, vb := range c.Blinded {
		v[i] = (vb - o) / s
	}
	return Estimate{V: v}, true
}

// SignalToError is the squared ratio of value to error. Under shape
// blinding without shift (oᵢ = 0) of a counting column,
//
//	v′ᵢ/σ′ᵢ = sᵢ·Nᵢ / (|sᵢ|·√Nᵢ) = ±√Nᵢ  ⇒  v̂ᵢ = (v′ᵢ/σ′ᵢ)²,
//
// exactly, whatever the scales. Bins with σ′ᵢ = 0 get no estimate.
func SignalToError(c Column, e []float64) (Estimate, bool) {
	v := nans(len(c.Blinded))
	ok := false
	for i, vb := range c.Blinded {
		if e[i] > 0 && isFinite(e[i]) && isFinite(vb) {
			r := vb / e[i]
			v[i] = r * r
			ok = true
		}
	}
	return Estimate{V: v}, ok
}

// DeclaredBound is the bin-by-bin bound from the declared ranges. For a
// counting bin under its own map (sᵢ, oᵢ), with qᵢ = σ′ᵢ²/c (c = 1),
//
//	Nᵢ = qᵢ / sᵢ²,   oᵢ(sᵢ) = v′ᵢ − qᵢ / sᵢ,
//
// and oᵢ(s) must lie in O = [o₋, o₊] for s in S = [s₋, s₊]. As oᵢ(s) is
// increasing in s on either side of 0, the feasible scales form one
// interval [aᵢ, bᵢ] ⊆ S:
//
//	aᵢ = s₋ if oᵢ(s₋) ≥ o₋, else qᵢ/(v′ᵢ − o₋);
//	bᵢ = s₊ if oᵢ(s₊) ≤ o₊, else qᵢ/(v′ᵢ − o₊);
//	empty if oᵢ(s₊) < o₋ or oᵢ(s₋) > o₊.
//
// The true value then lies between qᵢ/aᵢ² and qᵢ/bᵢ², and the estimate is
// the centre of that interval,
//
//	v̂ᵢ = (qᵢ/aᵢ² + qᵢ/bᵢ²) / 2.
//
// With a shift range small against the values (o₊ − o₋ ≪ v′ᵢ), bᵢ/aᵢ is
// close to 1 and v̂ᵢ close to Nᵢ, whatever the per-bin scales. Bins with an
// empty feasible set (not counting-like) get no estimate; the attack does
// not apply when 0 ∈ S.
func DeclaredBound(c Column, e []float64) (Estimate, bool) {
	sl, sh := span(c.Scale)
	ol, oh := span(c.Shift)
	if sl <= 0 && sh >= 0 {
		return Estimate{}, false
	}
	v := nans(len(c.Blinded))
	ok := false
	for i, vb := range c.Blinded {
		if !isFinite(vb) || !isFinite(e[i]) || e[i] < 0 {
			continue
		}
		q := e[i] * e[i]
		shift := func(s float64) float64 { return vb - q/s }
		if shift(sh) < ol || shift(sl) > oh {
			continue
		}
		a, b := sl, sh
		if shift(sl) < ol {
			a = clamp(q/(vb-ol), sl, sh)
		}
		if shift(sh) > oh {
			b = clamp(q/(vb-oh), sl, sh)
		}
		if a > b {
			continue
		}
		v[i] = (q/(a*a) + q/(b*b)) / 2
		ok = true
	}
	return Estimate{V: v}, ok
}

func clamp(x, lo, hi float64) float64 {
	if math.IsNaN(x) {
		return lo
	}
	return min(max(x, lo), hi)
}

// RelativeErrorLine is the straight-line fit of σ′ against v′, the attack
// on an uncertainty quoted as a fixed fraction f of the value (a common
// way to state a systematic). Under one global map,
//
//	σ′ᵢ = |s|·f·vᵢ = ±f·(v′ᵢ − o),
//
// so the line σ′ = α + β·v′ gives the shift exactly, ô = −α/β, whatever f
// and s. The scale is not identified; the estimate is the centre of the
// interval of true values left once o = ô, s ∈ S:
//
//	v̂ᵢ = (v′ᵢ − ô) · (1/s₋ + 1/s₊) / 2.
//
// It does not apply when 0 ∈ S.
func RelativeErrorLine(c Column, e []float64) (Estimate, bool) {
	sl, sh := span(c.Scale)
	if sl <= 0 && sh >= 0 {
		return Estimate{}, false
	}
	alpha, beta, ok := line(c.Blinded, e)
	if !ok {
		return Estimate{}, false
	}
	o := -alpha / beta
	k := (1/sl + 1/sh) / 2
	v := nans(len(c.Blinded))
	for i, vb := range c.Blinded {
		v[i] = (vb - o) * k
	}
	return Estimate{V: v}, true
}

// sameValue: two published numbers that come from the same true value
// through the same map are equal to rounding.
func sameValue(a, b float64) bool {
	return a == b || math.Abs(a-b) <= 1e-9*math.Max(math.Abs(a), math.Abs(b))
}

// longestRun returns the longest run of at least three consecutive bins
// whose x are equal (sameValue), as [i, j), or ok = false.
func longestRun(x []float64) (i, j int, ok bool) {
	bi, bj := 0, 0
	for start := 0; start < len(x); {
		end := start + 1
		for end < len(x) && isFinite(x[start]) && sameValue(x[end], x[start]) {
			end++
		}
		if end-start > bj-bi {
			bi, bj = start, end
		}
		start = end
	}
	return bi, bj, bj-bi >= 3
}

// ConstantRegion looks for a plateau of the true values, assumed to sit at
// the value p (an efficiency at 1, an empty region at 0).
//
// A run of three or more bins with equal v′ means, under one global map,
// equal true values there: v′ₚ = s·p + o. Then o = v′ₚ − s·p must lie in
// O, which bounds s to [a, b] = S ∩ {s : v′ₚ − s·p ∈ O} (for p = 0 it
// fixes o = v′ₚ and leaves S), and every bin follows from
//
//	vᵢ = (v′ᵢ − v′ₚ)/s + p,   v̂ᵢ = (v′ᵢ − v′ₚ)·(1/a + 1/b)/2 + p,
//
// the centre of the interval over s ∈ [a, b]. The plateau bins come out as
// p exactly.
//
// Without such a run, a run of three or more bins with equal v′/σ′
// (σ′ from the first uncertainty source) means, under per-bin scales
// without shift, equal v/σ there, which a plateau gives: those bins are
// estimated as p and the others not at all.
//
// It does not apply when 0 ∈ S, when no run exists, or when the run is
// inconsistent with p under the declared ranges.
func ConstantRegion(c Column, p float64) (Estimate, bool) {
	sl, sh := span(c.Scale)
	ol, oh := span(c.Shift)
	if sl <= 0 && sh >= 0 {
		return Estimate{}, false
	}
	n := len(c.Blinded)
	if i, j, ok := longestRun(c.Blinded); ok {
		vp := c.Blinded[i]
		a, b := sl, sh
		if p != 0 {
			a, b = (vp-oh)/p, (vp-ol)/p
			a, b = max(min(a, b), sl), min(max(a, b), sh)
		} else if vp < ol || vp > oh {
			return Estimate{}, false
		}
		if !(a <= b) {
			return Estimate{}, false
		}
		k := (1/a + 1/b) / 2
		v := nans(n)
		for m, vb := range c.Blinded {
			v[m] = (vb-vp)*k + p
		}
		return Estimate{V: v, Variant: fmt.Sprintf("plateau at %g over bins %d-%d", p, i+1, j)}, true
	}
	if len(c.BlindedErr) == 0 {
		return Estimate{}, false
	}
	r := nans(n)
	for m, vb := range c.Blinded {
		if e := c.BlindedErr[0][m]; e > 0 {
			r[m] = vb / e
		}
	}
	i, j, ok := longestRun(r)
	if !ok {
		return Estimate{}, false
	}
	v := nans(n)
	for m := i; m < j; m++ {
		v[m] = p
	}
	return Estimate{V: v, Variant: fmt.Sprintf("plateau at %g over bins %d-%d (equal value-to-error ratio)", p, i+1, j)}, true
}

// SharedRatio is the ratio of two columns with the same bin edges. If both
// were blinded with one shared map without shift,
//
//	r̂ᵢ = v′ₐ,ᵢ / v′_b,ᵢ = (s·vₐ,ᵢ)/(s·v_b,ᵢ) = rᵢ,
//
// the true ratio rᵢ = vₐ,ᵢ/v_b,ᵢ, exactly; with independent maps r̂ᵢ is off
// by sₐ/s_b and the shifts. The estimate is of the ratio, and it is scored
// against rᵢ with the yardstick min(Wʳᵢ, max(|rᵢ|, median |r|)), where Wʳᵢ
// is the width of {x/y : x ∈ Iₐ,ᵢ, y ∈ I_b,ᵢ} (infinite when I_b,ᵢ holds 0).
// Bins with v′_b,ᵢ = 0 get no estimate.
func SharedRatio(a, b Column) (Estimate, bool) {
	v := nans(len(a.Blinded))
	ok := false
	for i := range v {
		if b.Blinded[i] != 0 && isFinite(a.Blinded[i]) && isFinite(b.Blinded[i]) {
			v[i] = a.Blinded[i] / b.Blinded[i]
			ok = true
		}
	}
	return Estimate{V: v}, ok
}

// ratioFinding scores SharedRatio on a/b and on b/a and keeps the more
// precise.
func ratioFinding(a, b Column, threshold float64) (Finding, bool) {
	obs := a.Observable
	if b.Observable != a.Observable {
		obs += "/" + b.Observable
	}
	col := a.Column + "/" + b.Column
	var f Finding
	found := false
	for _, pair := range [][2]Column{{a, b}, {b, a}} {
		x, y := pair[0], pair[1]
		est, ok := SharedRatio(x, y)
		if !ok {
			continue
		}
		truth := nans(len(x.True))
		w := make([]float64, len(x.True))
		for i := range truth {
			if y.True[i] != 0 {
				truth[i] = x.True[i] / y.True[i]
			}
			w[i] = ratioWidth(x, y, i)
		}
		est.Variant = x.Observable + " " + x.Column + " over " + y.Observable + " " + y.Column
		if g, ok := best(obs, col, NameSharedRatio, []Estimate{est}, truth, yardstick(w, truth), threshold); ok && (!found || g.Precision < f.Precision) {
			f, found = g, true
		}
	}
	return f, found
}

// ratioWidth is the width of {x/y : x ∈ Iₐ,ᵢ, y ∈ I_b,ᵢ}, infinite when
// I_b,ᵢ contains 0.
func ratioWidth(a, b Column, i int) float64 {
	al, ah := interval(a.Blinded[i], a.Scale, a.Shift)
	bl, bh := interval(b.Blinded[i], b.Scale, b.Shift)
	if bl <= 0 && bh >= 0 {
		return math.Inf(1)
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range []float64{al, ah} {
		for _, y := range []float64{bl, bh} {
			r := x / y
			lo, hi = min(lo, r), max(hi, r)
		}
	}
	return hi - lo
}
