// Package consistency tests whether three or more teams' binned results
// agree with one another, and names the team that departs.
//
// For bin i, team t reports x_t with uncertainty sources k of sizes
// σ_t,k. A source k is correlated between any two different teams with
// the coefficient ρ_k (0 for independent chains, 1 for an error both take
// from the same origin), so the teams' covariance in bin i is
//
//	V_tu = Σ_k ρ_k^[t≠u] σ_t,k σ_u,k        (ρ^[t=u] = 1)
//
// The N-team statistic is the generalised χ² of the teams' values about
// their common mean, written through the N − 1 contrasts D_t = x_t − x_1
// (t = 2…N) so that a source every team shares in full, which the
// contrasts cancel, leaves it well defined:
//
//	χ²_i = Dᵀ W⁻¹ D,   W = C V Cᵀ,   C_t = e_t − e_1,   ndf_i = N − 1
//
// It equals min_μ (x − μ1)ᵀ V⁻¹ (x − μ1) whenever V is invertible, does
// not depend on which team is the reference, and is summed over bins:
// χ² = Σ_i χ²_i with ndf = (N − 1)·bins. W is factored by Cholesky; no
// explicit inverse is formed.
//
// Each team also gets its leave-one-out deviation: the difference between
// its value and the best linear unbiased combination of the other teams,
//
//	x̂_−t = wᵀ x_o,   w = V_oo⁻¹ 1 / (1ᵀ V_oo⁻¹ 1)
//	σ²(x_t − x̂_−t) = V_tt + wᵀ V_oo w − 2 wᵀ V_o,t
//
// whose pulls p_t,i, squared and summed over bins, give a χ² with one
// degree of freedom per bin. Because a chain that departs usually departs
// in every bin the same way, which an omnibus χ² sees late, each team also
// gets the shift test of its mean pull,
//
//	z_t = Σ_i p_t,i / √bins,   p = 2(1 − Φ(|z_t|))
//
// exact for Gaussian errors since bins are independent. The team with the
// smallest of its two p-values is the one that departs.
//
// A common affine map v′ = s·v + o applied to every team (the blinding
// map) multiplies D, every σ and so √W by |s|: every χ² and p-value here
// is the same on blinded and true tables.
package consistency

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Source is one uncertainty source: its size per team and bin, and its
// correlation between any two different teams.
type Source struct {
	Name  string
	Sigma [][]float64 // [team][bin], non-negative
	Rho   float64     // between two different teams, in [-1, 1]
}

// Input holds N ≥ 3 teams' values of one observable on common bins.
type Input struct {
	Teams   []string
	Values  [][]float64 // [team][bin]
	Sources []Source
}

// Departure is one team's leave-one-out deviation.
type Departure struct {
	Team   string
	Pulls  []float64 // (x_t − x̂_−t)/σ per bin
	Chi2   float64
	NDF    int
	PValue float64 // upper tail of χ²(NDF)
	// MeanPull is the mean of Pulls; ShiftZ = Σ pulls/√bins and
	// ShiftPValue its two-sided normal p-value.
	MeanPull    float64
	ShiftZ      float64
	ShiftPValue float64
}

// MinPValue is the smaller of the team's two p-values.
func (d Departure) MinPValue() float64 { return math.Min(d.PValue, d.ShiftPValue) }

// Result is the N-team consistency test of one observable.
type Result struct {
	Chi2    float64
	NDF     int
	PValue  float64   // upper tail of χ²(NDF)
	BinChi2 []float64 // χ²_i per bin, N − 1 degrees of freedom each
	// Combined is the best linear unbiased combination of all teams per
	// bin, and CombinedSigma its uncertainty.
	Combined      []float64
	CombinedSigma []float64
	LeaveOneOut   []Departure // one per team, in input order
}

// PValues lists the family of p-values the verdict judges, in a fixed
// order: the N-team χ², then for each team its leave-one-out χ² and its
// shift test. A caller adjusts them for multiplicity together with its
// other criteria (Holm), so the family-wise false-alarm rate holds.
func (r *Result) PValues() []float64 {
	ps := []float64{r.PValue}
	for _, d := range r.LeaveOneOut {
		ps = append(ps, d.PValue, d.ShiftPValue)
	}
	return ps
}

// Departing returns the team whose smallest leave-one-out p-value (χ² or
// shift) is smallest.
func (r *Result) Departing() Departure {
	best := r.LeaveOneOut[0]
	for _, d := range r.LeaveOneOut[1:] {
		if d.MinPValue() < best.MinPValue() {
			best = d
		}
	}
	return best
}

// ErrShape reports inputs whose dimensions do not fit together.
var ErrShape = errors.New("consistency: inputs of different shapes")

// Test runs the N-team consistency test. It refuses fewer than three
// teams, mismatched shapes, non-finite numbers, correlations outside
// [-1, 1], and a bin whose covariance leaves a contrast without
// uncertainty (nothing that could not be compared passes).
func Test(in Input) (*Result, error) {
	n := len(in.Teams)
	if n < 3 {
		return nil, fmt.Errorf("consistency: %d teams; the N-team test needs at least 3 (compare two teams pairwise)", n)
	}
	if len(in.Values) != n {
		return nil, ErrShape
	}
	bins := len(in.Values[0])
	if bins == 0 {
		return nil, errors.New("consistency: no bins to compare")
	}
	for t := range n {
		if len(in.Values[t]) != bins {
			return nil, fmt.Errorf("%w: team %s has %d bins, team %s %d", ErrShape, in.Teams[t], len(in.Values[t]), in.Teams[0], bins)
		}
		for i, v := range in.Values[t] {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("consistency: team %s bin %d: value %v is not finite", in.Teams[t], i+1, v)
			}
		}
	}
	if len(in.Sources) == 0 {
		return nil, errors.New("consistency: no uncertainty source; nothing can be judged without uncertainties")
	}
	for _, s := range in.Sources {
		if math.IsNaN(s.Rho) || s.Rho < -1 || s.Rho > 1 {
			return nil, fmt.Errorf("consistency: source %s: correlation %v outside [-1, 1]", s.Name, s.Rho)
		}
		if len(s.Sigma) != n {
			return nil, fmt.Errorf("%w: source %s has %d teams", ErrShape, s.Name, len(s.Sigma))
		}
		for t := range n {
			if len(s.Sigma[t]) != bins {
				return nil, fmt.Errorf("%w: source %s, team %s has %d bins", ErrShape, s.Name, in.Teams[t], len(s.Sigma[t]))
			}
			for i, e := range s.Sigma[t] {
				if math.IsNaN(e) || math.IsInf(e, 0) || e < 0 {
					return nil, fmt.Errorf("consistency: source %s, team %s, bin %d: uncertainty %v is not a finite non-negative number", s.Name, in.Teams[t], i+1, e)
				}
			}
		}
	}

	r := &Result{
		BinChi2:       make([]float64, bins),
		Combined:      make([]float64, bins),
		CombinedSigma: make([]float64, bins),
		LeaveOneOut:   make([]Departure, n),
	}
	for t := range n {
		r.LeaveOneOut[t] = Departure{Team: in.Teams[t], Pulls: make([]float64, bins), NDF: bins}
	}
	v := mat.NewSymDense(n, nil)
	for i := range bins {
		fill(v, in, i)
		c2, err := contrastChi2(v, in, i)
		if err != nil {
			return nil, err
		}
		r.BinChi2[i] = c2
		r.Chi2 += c2
		all := make([]int, n)
		for t := range all {
			all[t] = t
		}
		// The combination of all teams: it exists when V is positive
		// definite; with a source shared in full and no other error it may
		// not, and then it is left undefined (NaN) while the contrasts,
		// which do not need it, still decide.
		if w, varw, ok := blue(v, all); ok {
			r.Combined[i] = dot(w, in.Values, all, i)
			r.CombinedSigma[i] = math.Sqrt(varw)
		} else {
			r.Combined[i], r.CombinedSigma[i] = math.NaN(), math.NaN()
		}
		for t := range n {
			others := make([]int, 0, n-1)
			for u := range n {
				if u != t {
					others = append(others, u)
				}
			}
			w, _, ok := blue(v, others)
			if !ok {
				return nil, fmt.Errorf("consistency: bin %d: the teams other than %s have a covariance that is not positive definite (an uncertainty of 0, or sources correlated in full with no other error)", i+1, in.Teams[t])
			}
			d := in.Values[t][i] - dot(w, in.Values, others, i)
			s2 := v.At(t, t)
			for a, ua := range others {
				s2 -= 2 * w[a] * v.At(ua, t)
				for b, ub := range others {
					s2 += w[a] * w[b] * v.At(ua, ub)
				}
			}
			if !(s2 > 0) {
				return nil, fmt.Errorf("consistency: bin %d: team %s's deviation from the others has no uncertainty", i+1, in.Teams[t])
			}
			p := d / math.Sqrt(s2)
			r.LeaveOneOut[t].Pulls[i] = p
			r.LeaveOneOut[t].Chi2 += p * p
		}
	}
	r.NDF = (n - 1) * bins
	r.PValue = distuv.ChiSquared{K: float64(r.NDF)}.Survival(r.Chi2)
	for t := range r.LeaveOneOut {
		d := &r.LeaveOneOut[t]
		d.PValue = distuv.ChiSquared{K: float64(d.NDF)}.Survival(d.Chi2)
		var sum float64
		for _, p := range d.Pulls {
			sum += p
		}
		d.MeanPull = sum / float64(bins)
		d.ShiftZ = sum / math.Sqrt(float64(bins))
		d.ShiftPValue = math.Erfc(math.Abs(d.ShiftZ) / math.Sqrt2)
	}
	return r, nil
}

// fill sets v to the teams' covariance in bin i.
func fill(v *mat.SymDense, in Input, i int) {
	n := len(in.Teams)
	for t := range n {
		for u := t; u < n; u++ {
			var c float64
			for _, s := range in.Sources {
				rho := s.Rho
				if t == u {
					rho = 1
				}
				c += rho * s.Sigma[t][i] * s.Sigma[u][i]
			}
			v.SetSym(t, u, c)
		}
	}
}

// contrastChi2 computes Dᵀ W⁻¹ D for the contrasts against team 0.
func contrastChi2(v *mat.SymDense, in Input, i int) (float64, error) {
	n := len(in.Teams)
	m := n - 1
	w := mat.NewSymDense(m, nil)
	d := mat.NewVecDense(m, nil)
	// W_ab = Cov(x_a − x_0, x_b − x_0) = V_ab − V_a0 − V_0b + V_00.
	for a := 1; a < n; a++ {
		d.SetVec(a-1, in.Values[a][i]-in.Values[0][i])
		for b := a; b < n; b++ {
			w.SetSym(a-1, b-1, v.At(a, b)-v.At(a, 0)-v.At(0, b)+v.At(0, 0))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(w) {
		return 0, fmt.Errorf("consistency: bin %d: the differences between teams have a covariance that is not positive definite (an uncertainty of 0, or an error shared in full that leaves a difference without uncertainty)", i+1)
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, d); err != nil {
		return 0, fmt.Errorf("consistency: bin %d: %v", i+1, err)
	}
	return mat.Dot(d, &x), nil
}

// blue returns the weights of the best linear unbiased combination of the
// teams idx in the bin whose covariance is v, and its variance
// 1/(1ᵀ V⁻¹ 1). ok is false when V restricted to idx is not positive
// definite.
func blue(v *mat.SymDense, idx []int) (w []float64, variance float64, ok bool) {
	k := len(idx)
	sub := mat.NewSymDense(k, nil)
	for a, ua := range idx {
		for b := a; b < k; b++ {
			sub.SetSym(a, b, v.At(ua, idx[b]))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(sub) {
		return nil, 0, false
	}
	ones := mat.NewVecDense(k, nil)
	for a := range k {
		ones.SetVec(a, 1)
	}
	var y mat.VecDense
	if err := ch.SolveVecTo(&y, ones); err != nil {
		return nil, 0, false
	}
	den := mat.Sum(&y)
	if !(den > 0) {
		return nil, 0, false
	}
	w = make([]float64, k)
	for a := range k {
		w[a] = y.AtVec(a) / den
	}
	return w, 1 / den, true
}

func dot(w []float64, values [][]float64, idx []int, i int) float64 {
	var s float64
	for a, u := range idx {
		s += w[a] * values[u][i]
	}
	return s
}
