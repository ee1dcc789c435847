// Package compare judges whether two analysis chains agree on a binned
// result.
//
// For bin i of a compared column, with values a_i, b_i and uncertainties
// from sources k (each uncertainty column is one source, with its own
// correlation ρ_k between the two chains; see [Options]), the difference,
// its uncertainty and the pull are
//
//	d_i    = a_i - b_i
//	σ_d,i² = Σ_k (σ_a,k,i - σ_b,k,i)² + 2 (1 - ρ_k) σ_a,k,i σ_b,k,i   (default)
//	σ_d,i² = |(σ_a,i - σ_b,i)(σ_a,i + σ_b,i)|                         (Barlow's rule, one sample a subset of the other)
//	p_i    = d_i / σ_d,i
//
// The first form is Σ_k (σ_a,k² + σ_b,k² - 2ρ_k σ_a,k σ_b,k) without its
// cancellation; σ_a,i in the second is the quadrature sum of a's sources.
// Very small or large σ are scaled by a power of two before squaring. A bin
// with σ_d = 0 and d ≠ 0 has an infinite pull and cannot be compared. When
// full covariance matrices are given, χ² uses W = V_a + V_b - C - Cᵀ, with C
// the cross-covariance, and is computed through a Cholesky factorisation:
//
//	χ² = dᵀ W⁻¹ d,  ndf = number of compared bins
//
// otherwise χ² = Σ p_i². The p-value is the upper tail of χ²(ndf).
//
// With asymmetric errors, each side uses the error that faces the other
// value: σ_a is a's lower error when a > b and its upper error otherwise, and
// the reverse for b. This is the usual prescription for combining
// asymmetric errors in a difference (R. Barlow, "Asymmetric errors",
// PHYSTAT 2003, arXiv:physics/0401042, section on the simple approach), and
// the report says when it was used.
//
// The shape of the pulls is tested too: their mean and sample width, the
// one-sample Kolmogorov–Smirnov test against N(0,1) (see
// [stats.KSPValue]), the exact one-sided Wald–Wolfowitz runs test on the
// signs of d_i (zeros dropped), and the largest |p_i| with its Šidák
// trials-corrected p-value
//
//	p_max = 1 - (1 - 2(1 - Φ(|p|max)))^n
//
// The verdict holds these p-values, over a whole family of comparisons, to
// one false-alarm rate α by Holm's method ([AdjustFamily]); tolerances are
// described in [Options].
package compare

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"tandem/compare/stats"
	"tandem/compare/table"
)

// Criterion kinds.
const (
	// KindCheck is a precondition: every bin could be compared.
	KindCheck = "check"
	// KindPValue is a p-value held, after the family-wise adjustment, to α.
	KindPValue = "p-value"
	// KindTolerance is a declared physics or numerical tolerance.
	KindTolerance = "tolerance"
)

// Criterion names, in the fixed order a [Result] lists them.
const (
	CritComparable = "comparable bins"
	CritChi2       = "chi2 p-value"
	CritKS         = "KS p-value"
	CritRuns       = "runs p-value"
	CritMaxPullP   = "max-pull p-value"
	CritMaxPull    = "max |pull|"
	CritNumerical  = "numerical tolerance (|a-b| / allowed)"
)

// Criterion is one test of the verdict.
type Criterion struct {
	Name string `json:"name"`
	Kind string `json:"kind"`
	// Value is the raw value: the p-value for a p-value criterion.
	Value float64 `json:"value"`
	// Adjusted is the family-wise adjusted p-value (Holm), for p-value
	// criteria only; it is what is held to Limit.
	Adjusted *float64 `json:"adjusted_p_value,omitempty"`
	// Limit is the bound the value (or adjusted p-value) is held to; Op
	// says how ("<=", or ">" for p-values: pass when adjusted p > α).
	Limit float64 `json:"limit"`
	Op    string  `json:"op"`
	Pass  bool    `json:"pass"`
	// Detail explains a failure in words.
	Detail string `json:"detail,omitempty"`
	// Note qualifies the criterion (e.g. "not trials-corrected").
	Note string `json:"note,omitempty"`
	// Bins lists the 1-based bins that fail a check or tolerance.
	Bins []int `json:"bins,omitempty"`
	why  string
}

// Source is one error source as it entered σ_d.
type Source struct {
	Name string `json:"name"`
	// Rho is the correlation used; for a per-bin correlation, its mean
	// over the compared bins, and PerBin says where it came from.
	Rho    float64 `json:"rho"`
	PerBin string  `json:"per_bin,omitempty"`
	// Declared is false when Rho is the undeclared default 0.
	Declared bool `json:"declared"`
	// Share is the source's mean share of σ_d² over the compared bins:
	// mean_i of (its term in σ_d,i²) / σ_d,i². Shares add up to 1.
	Share float64 `json:"share"`
}

// Result is the outcome of comparing one column between two chains.
//
// A statistic that is undefined is NaN: every statistic when no bin
// carries a pull (NDF = 0), the pull width and the errors of the mean and
// width with one pull, a source's share when no bin is compared, and the
// pull of a bin with d = 0 and σ_d = 0 (0/0). A bin with d ≠ 0 and
// σ_d = 0 has an infinite pull (see Incomparable). Without uncertainties
// (a numerical tolerance alone) every pull is NaN.
type Result struct {
	Column string `json:"column"`
	// LabelA and LabelB name the two sides (file names, or teams).
	LabelA string    `json:"label_a,omitempty"`
	LabelB string    `json:"label_b,omitempty"`
	Bins   int       `json:"bins"`
	Lo     []float64 `json:"-"`
	Hi     []float64 `json:"-"`
	// YLo and YHi are the y edges of the cells of a 2-D comparison (then
	// Lo and Hi are the x edges); nil for 1-D bins. See [Cells].
	YLo, YHi    []float64 `json:"-"`
	A, B        []float64 `json:"-"`
	ErrA, ErrB  []float64 `json:"-"`
	Diff        []float64 `json:"-"`
	SigmaDiff   []float64 `json:"-"`
	Pulls       []float64 `json:"pulls"`
	Chi2        float64   `json:"chi2"`
	NDF         int       `json:"ndf"`
	PValue      float64   `json:"p_value"`
	PullMean    float64   `json:"pull_mean"`
	PullMeanErr float64   `json:"pull_mean_error"`
	PullWidth   float64   `json:"pull_width"`
	PullWidthEr float64   `json:"pull_width_error"`
	MaxAbsPull  float64   `json:"max_abs_pull"`
	MaxPullBin  int       `json:"max_pull_bin"`
	MaxPullP    float64   `json:"max_pull_p_value"`
	KSStat      float64   `json:"ks_statistic"`
	KSP         float64   `json:"ks_p_value"`
	Runs        int       `json:"runs"`
	RunsPos     int       `json:"runs_positive"`
	RunsNeg     int       `json:"runs_negative"`
	RunsP       float64   `json:"runs_p_value"`
	// ZeroSigma lists (0-based) bins whose combined uncertainty is zero; they
	// are left out of the pulls, χ² and shape tests.
	ZeroSigma []int `json:"zero_sigma_bins,omitempty"`
	// Incomparable lists (0-based) the zero-σ bins with d ≠ 0: they fail
	// the comparison, and their pulls are ±Inf.
	Incomparable []int `json:"incomparable_bins,omitempty"`
	Covariance   bool  `json:"covariance"`
	// Condition is the condition number of W when covariance matrices
	// were used (an estimate, from the Cholesky factor).
	Condition  float64  `json:"condition_number,omitempty"`
	Asymmetric bool     `json:"asymmetric_errors"`
	Sources    []Source `json:"sources"`
	// Criteria are in the fixed order of the Crit* names; absent ones
	// are left out.
	Criteria []Criterion `json:"criteria"`
	// Alpha is the family-wise false-alarm rate the p-value criteria were
	// held to, and Family the number of p-values adjusted together.
	Alpha    float64  `json:"alpha"`
	Family   int      `json:"family_size"`
	Warnings []string `json:"warnings,omitempty"`
	// Counts holds the count tests when the column was compared as
	// counts (Options.Counts); nil otherwise. Chi2, NDF and PValue then
	// are G, the number of informative bins and G's Monte Carlo p-value;
	// KSStat and KSP the randomized PIT's KS test; MaxPullP the Šidák
	// trials-corrected smallest per-bin p-value; the runs fields the runs
	// test of the signs of k_i - n_i p0 (see [CountStats]).
	Counts *CountStats `json:"counts,omitempty"`
	Pass   bool        `json:"-"`
}

// ErrNotPositiveDefinite is returned (wrapped, with detail) when W is not
// positive definite.
var ErrNotPositiveDefinite = errors.New("combined covariance W = Va + Vb - C - Cᵀ is not positive definite")

// ErrNoCriterion is returned when the options leave nothing to judge by.
var ErrNoCriterion = errors.New("no criterion left to judge agreement (alpha is 0 and no tolerance is declared)")

// ErrNoUncertainty is matched (errors.Is) by a [*NoUncertaintyError].
var ErrNoUncertainty = errors.New("no uncertainty")

// NoUncertaintyError says that a column has no uncertainty source and no
// numerical tolerance was declared, so it cannot be compared statistically.
type NoUncertaintyError struct {
	Source, Column string
}

func (e *NoUncertaintyError) Error() string {
	return fmt.Sprintf("%s: column %q has no uncertainty column, so it cannot be compared statistically", e.Source, e.Column)
}

// Is makes errors.Is(err, ErrNoUncertainty) hold.
func (e *NoUncertaintyError) Is(target error) bool { return target == ErrNoUncertainty }

// errSource is one uncertainty source of both sides, bin by bin. For
// symmetric errors up and down are the same slice.
type errSource struct {
	name                   string
	downA, upA, downB, upB []float64
	rho                    float64
	rhoBins                []float64
	perBin                 string
	declared               bool
}

// sides is one column of both chains, ready for comparison.
type sides struct {
	column, labelA, labelB string
	lo, hi, a, b           []float64
	src                    []errSource
	asym                   bool
}

// Series compares two series bin by bin, taking each series' combined
// uncertainty as a single error source "total" with the correlation
// opt.Default (or the deprecated opt.Correlation). The series must have the
// same bins (see [table.SameEdges]); the caller checks the edges. The
// result is adjusted as a family of its own (see [AdjustFamily]).
func Series(a, b *table.Series, opt Options) (*Result, error) {
	e := opt.effective()
	if e.Default.Column != "" {
		return nil, fmt.Errorf("a per-bin correlation column (%q) needs tables, not series", e.Default.Column)
	}
	if opt.Counts {
		return nil, errors.New("counts are compared from tables (Columns) or with CountTests, not as series")
	}
	s := &sides{column: a.Column, labelA: a.Source, labelB: b.Source, lo: a.Lo, hi: a.Hi, a: a.V, b: b.V,
		asym: a.Asymmetric() || b.Asymmetric()}
	if len(a.Down) > 0 || len(b.Down) > 0 {
		s.src = []errSource{{name: "total", downA: a.Down, upA: a.Up, downB: b.Down, upB: b.Up,
			rho: e.Default.Value, declared: opt.Declared()}}
	}
	r, err := compareSides(s, &opt)
	if err != nil {
		return nil, err
	}
	if err := AdjustFamily([]*Result{r}, e.Alpha); err != nil {
		return nil, err
	}
	return r, nil
}

// compareSides computes every statistic and the criteria of one column;
// the p-value criteria are not adjusted yet.
func compareSides(s *sides, opt *Options) (*Result, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	e := opt.effective()
	n := len(s.a)
	if n != len(s.b) {
		return nil, fmt.Errorf("tables have %d and %d bins", n, len(s.b))
	}
	if n == 0 {
		return nil, errors.New("no bins to compare")
	}
	for _, src := range s.src {
		if len(src.downA) != n || len(src.upA) != n || len(src.downB) != n || len(src.upB) != n {
			return nil, fmt.Errorf("error source %q does not have one value per bin", src.name)
		}
	}
	cov := opt.CovA != nil && opt.CovB != nil
	statistical := len(s.src) > 0 || cov
	tol := e.AbsTol > 0 || e.RelTol > 0
	switch {
	case !statistical && !tol:
		return nil, &NoUncertaintyError{Source: s.labelA, Column: s.column}
	case e.Alpha == 0 && e.MaxPull == 0 && !tol:
		return nil, ErrNoCriterion
	}
	if cov && (opt.CovA.SymmetricDim() != n || opt.CovB.SymmetricDim() != n) {
		return nil, fmt.Errorf("covariance matrices are %d×%d and %d×%d for %d bins", opt.CovA.SymmetricDim(), opt.CovA.SymmetricDim(), opt.CovB.SymmetricDim(), opt.CovB.SymmetricDim(), n)
	}
	if cov && opt.CovCross != nil {
		if rr, cc := opt.CovCross.Dims(); rr != n || cc != n {
			return nil, fmt.Errorf("cross-covariance is %d×%d for %d bins", rr, cc, n)
		}
	}
	if c := e.Default; cov && opt.CovCross == nil && c.Set && c.Value != 0 {
		cross, err := CrossFromCorrelation(opt.CovA, opt.CovB, c.Value)
		if err != nil {
			return nil, err
		}
		o := *opt
		o.CovCross = cross
		opt = &o
	}
	r := &Result{
		Column: s.column, LabelA: s.labelA, LabelB: s.labelB, Bins: n, Lo: s.lo, Hi: s.hi, A: s.a, B: s.b,
		Diff: make([]float64, n), SigmaDiff: make([]float64, n), Pulls: make([]float64, n),
		Asymmetric: s.asym,
	}
	if len(s.src) == 1 && !s.asym && !cov {
		// one symmetric source: its errors are the totals
		r.ErrA, r.ErrB = s.src[0].downA, s.src[0].downB
	} else {
		r.ErrA, r.ErrB = make([]float64, n), make([]float64, n)
	}
	ownErrs := len(s.src) != 1 || s.asym || cov
	// Bins are independent: large tables are split over the cores, each
	// part collecting its own zero-σ bins and source shares, merged in
	// order afterwards.
	parts := splitRange(n)
	outs := make([]binsOut, len(parts))
	var wg sync.WaitGroup
	for k, pr := range parts {
		wg.Add(1)
		go func() {
			defer wg.Done()
			outs[k] = r.pulls(s, opt, pr[0], pr[1], ownErrs)
		}()
	}
	wg.Wait()
	nShare := len(s.src)
	if opt.Subset || cov {
		nShare = 1
	}
	shares := make([]float64, nShare)
	for _, o := range outs {
		r.ZeroSigma = append(r.ZeroSigma, o.zero...)
		r.Incomparable = append(r.Incomparable, o.bad...)
		for k, v := range o.share {
			shares[k] += v
		}
	}
	used := r.withoutZeroSigma(r.Pulls)
	r.NDF = len(used)
	if !statistical {
		// without uncertainties no bin has a pull, and none is
		// "incomparable": the numerical tolerance alone judges
		r.NDF = 0
		used = nil
		r.ZeroSigma, r.Incomparable = nil, nil
		for i := range r.Pulls {
			r.Pulls[i] = math.NaN()
		}
	}
	r.sources(s, opt, shares)
	if cov {
		chi2, cond, err := covChi2(r, opt)
		if err != nil {
			return nil, err
		}
		r.Chi2, r.Covariance, r.Condition = chi2, true, cond
	} else {
		for _, p := range used {
			r.Chi2 += p * p
		}
	}
	shape(r, used)
	r.warn(opt, statistical)
	r.judge(e, statistical)
	return r, nil
}

// binsOut is what one part of the per-bin loop found.
type binsOut struct {
	zero, bad []int
	share     []float64
}

// pulls fills differences, combined uncertainties and pulls for bins
// [lo, hi). When a bin's largest σ is below 2⁻⁵⁰⁰ or above 2⁵⁰⁰, every σ
// of the bin is scaled by a power of two (exact) so that the largest is in
// [0.5, 1) before squaring, which keeps 1e-200 and 1e200 errors from
// under- or overflowing; in between, squares cannot over- or underflow.
func (r *Result) pulls(s *sides, opt *Options, lo, hi int, ownErrs bool) binsOut {
	var out binsOut
	K := len(s.src)
	cov := opt.CovA != nil && opt.CovB != nil
	sa, sb, term := make([]float64, K), make([]float64, K), make([]float64, K)
	if opt.Subset || cov {
		out.share = make([]float64, 1)
	} else {
		out.share = make([]float64, K)
	}
	for i := lo; i < hi; i++ {
		d := s.a[i] - s.b[i]
		m := 0.0
		for k := range s.src {
			src := &s.src[k]
			x, y := src.upA[i], src.downB[i]
			if d > 0 {
				x, y = src.downA[i], src.upB[i]
			}
			sa[k], sb[k] = x, y
			m = max(m, x, y)
		}
		v, qa, qb := 0.0, 0.0, 0.0 // σ_d², σ_a², σ_b², in units of 2^(2ex)
		ex := 0
		if m > 0 {
			if m < 0x1p-500 || m > 0x1p500 {
				_, ex = math.Frexp(m)
			}
			for k := range sa {
				x, y := sa[k], sb[k]
				if ex != 0 {
					x, y = math.Ldexp(x, -ex), math.Ldexp(y, -ex)
				}
				qa, qb = qa+x*x, qb+y*y
				rho := s.src[k].rho
				if s.src[k].rhoBins != nil {
					rho = s.src[k].rhoBins[i]
				}
				dd := x - y
				term[k] = dd*dd + 2*(1-rho)*x*y
				v += term[k]
			}
		}
		ta, tb := math.Sqrt(qa), math.Sqrt(qb)
		if opt.Subset {
			v = math.Abs((ta - tb) * (ta + tb))
		}
		sd := math.Sqrt(v)
		if ex != 0 {
			ta, tb, sd = math.Ldexp(ta, ex), math.Ldexp(tb, ex), math.Ldexp(sd, ex)
		}
		if ownErrs {
			r.ErrA[i], r.ErrB[i] = ta, tb
		}
		if cov {
			w := opt.CovA.At(i, i) + opt.CovB.At(i, i)
			if opt.CovCross != nil {
				w -= 2 * opt.CovCross.At(i, i)
			}
			sd = 0
			if w > 0 {
				sd = math.Sqrt(w)
			}
			r.ErrA[i], r.ErrB[i] = math.Sqrt(max(opt.CovA.At(i, i), 0)), math.Sqrt(max(opt.CovB.At(i, i), 0))
		}
		r.Diff[i] = d
		r.SigmaDiff[i] = sd
		if !(sd > 0) {
			out.zero = append(out.zero, i)
			if d != 0 {
				out.bad = append(out.bad, i)
				r.Pulls[i] = math.Copysign(math.Inf(1), d)
			} else {
				r.Pulls[i] = math.NaN() // 0/0: no pull
			}
			continue
		}
		r.Pulls[i] = d / sd
		switch {
		case opt.Subset || cov:
			out.share[0]++
		default:
			for k := range term {
				out.share[k] += term[k] / v
			}
		}
	}
	return out
}

// sources fills r.Sources from the summed per-bin shares.
func (r *Result) sources(s *sides, opt *Options, shares []float64) {
	used := float64(r.Bins - len(r.ZeroSigma))
	frac := func(x float64) float64 {
		if used == 0 {
			return math.NaN() // no bin carries a pull: no share
		}
		return x / used
	}
	switch {
	case opt.CovA != nil && opt.CovB != nil:
		name := "covariance matrices Va, Vb"
		if opt.CovCross != nil {
			name += " and cross-covariance C"
		}
		r.Sources = []Source{{Name: name, Declared: true, Share: frac(shares[0])}}
		return
	case opt.Subset:
		r.Sources = []Source{{Name: "all sources (subset rule)", PerBin: "subset rule |σa² - σb²|", Declared: true, Share: frac(shares[0])}}
		return
	}
	r.Sources = make([]Source, 0, len(s.src))
	for k, src := range s.src {
		so := Source{Name: src.name, Rho: src.rho, PerBin: src.perBin, Declared: src.declared, Share: frac(shares[k])}
		if src.rhoBins != nil {
			sum, cnt := 0.0, 0
			z := 0
			for i, v := range src.rhoBins {
				if z < len(r.ZeroSigma) && r.ZeroSigma[z] == i {
					z++
					continue
				}
				sum, cnt = sum+v, cnt+1
			}
			so.Rho = math.NaN()
			if cnt > 0 {
				so.Rho = sum / float64(cnt)
			}
		}
		r.Sources = append(r.Sources, so)
	}
}

// splitRange cuts [0, n) into one part per core for large n, else one.
func splitRange(n int) [][2]int {
	parts := runtime.GOMAXPROCS(0)
	if n < 1<<16 || parts < 2 {
		parts = 1
	}
	size := (n + parts - 1) / parts
	var out [][2]int
	for lo := 0; lo < n; lo += size {
		out = append(out, [2]int{lo, min(lo+size, n)})
	}
	return out
}

// withoutZeroSigma returns the per-bin values xs of the bins that carry a
// pull, leaving out the zero-σ bins (xs itself when there are none).
func (r *Result) withoutZeroSigma(xs []float64) []float64 {
	if len(r.ZeroSigma) == 0 {
		return xs
	}
	out := make([]float64, 0, len(xs)-len(r.ZeroSigma))
	z := 0
	for i, x := range xs {
		if z < len(r.ZeroSigma) && r.ZeroSigma[z] == i {
			z++
			continue
		}
		out = append(out, x)
	}
	return out
}

// CondWarn is the condition number of W above which a warning is given:
// at 1e10 about 10 of the 16 significant digits of χ² may be lost.
const CondWarn = 1e10

// covChi2 computes dᵀ W⁻¹ d over all bins by Cholesky factorisation, and
// the condition number of W.
func covChi2(r *Result, opt *Options) (float64, float64, error) {
	n := r.Bins
	w := mat.NewSymDense(n, nil)
	w.AddSym(opt.CovA, opt.CovB)
	if opt.CovCross != nil {
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				w.SetSym(i, j, w.At(i, j)-opt.CovCross.At(i, j)-opt.CovCross.At(j, i))
			}
		}
	}
	var ch mat.Cholesky
	if ok := ch.Factorize(w); !ok {
		return 0, 0, notPD(w)
	}
	cond := ch.Cond()
	d := mat.NewVecDense(n, slices.Clone(r.Diff))
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, d); err != nil {
		return 0, cond, fmt.Errorf("solving with W: %w", err)
	}
	return mat.Dot(d, &x), cond, nil
}

// CrossFromCorrelation is the cross-covariance of two chains whose errors
// are e_a = L_a u and e_b = L_b v, with V = L Lᵀ the Cholesky factors and u,
// v unit normal vectors correlated by ρ component by component:
//
//	C = cov(e_a, e_b) = ρ L_a L_bᵀ
//
// For diagonal matrices C_ii = ρ σ_a,i σ_b,i, the per-bin rule, and
// W = V_a + V_b - C - Cᵀ stays positive semi-definite for |ρ| <= 1. Under
// blinding (V_ij scaled by s_i s_j) C scales the same way, so χ² is
// unchanged.
func CrossFromCorrelation(va, vb *mat.SymDense, rho float64) (*mat.Dense, error) {
	var ca, cb mat.Cholesky
	for _, x := range []struct {
		ch   *mat.Cholesky
		v    *mat.SymDense
		name string
	}{{&ca, va, "first"}, {&cb, vb, "second"}} {
		if !x.ch.Factorize(x.v) {
			return nil, fmt.Errorf("the covariance matrix of the %s chain is not positive definite (smallest eigenvalue %.4g)", x.name, minEigen(x.v))
		}
	}
	var la, lb mat.TriDense
	ca.LTo(&la)
	cb.LTo(&lb)
	var c mat.Dense
	c.Mul(&la, lb.T())
	c.Scale(rho, &c)
	return &c, nil
}

// notPD wraps ErrNotPositiveDefinite with W's smallest eigenvalue.
func notPD(w *mat.SymDense) error {
	return fmt.Errorf("%w: its smallest eigenvalue is %.4g", ErrNotPositiveDefinite, minEigen(w))
}

// minEigen is the smallest eigenvalue of v, or NaN if it cannot be found.
func minEigen(v *mat.SymDense) float64 {
	var es mat.EigenSym
	if es.Factorize(v, false) {
		if vals := es.Values(nil); len(vals) > 0 {
			return vals[0]
		}
	}
	return math.NaN()
}

// shape fills the pull-distribution statistics from the used pulls. What
// is undefined is NaN: every statistic when no bin carries a pull (the
// p-values would otherwise read 1, like a pass), the width and the errors
// of the mean and width with one pull, the largest |pull| when no bin has
// one (a d ≠ 0, σ_d = 0 bin has an infinite pull, which counts).
func shape(r *Result, used []float64) {
	n := len(used)
	nan := math.NaN()
	r.PullWidth, r.PullMeanErr, r.PullWidthEr = nan, nan, nan
	r.MaxAbsPull, r.MaxPullBin = nan, -1
	for i, p := range r.Pulls {
		if a := math.Abs(p); !math.IsNaN(a) && (r.MaxPullBin < 0 || a > r.MaxAbsPull) {
			r.MaxAbsPull, r.MaxPullBin = a, i
		}
	}
	if n == 0 {
		r.Chi2, r.PValue, r.PullMean = nan, nan, nan
		r.KSStat, r.KSP, r.RunsP, r.MaxPullP = nan, nan, nan, nan
		return
	}
	// The KS test is the costliest; it runs beside the other statistics.
	ksDone := make(chan struct{})
	go func() {
		defer close(ksDone)
		r.KSStat = stats.KSStatistic(used)
		r.KSP = stats.KSPValue(n, r.KSStat)
	}()
	defer func() { <-ksDone }()
	r.PValue = distuv.ChiSquared{K: float64(r.NDF)}.Survival(r.Chi2)
	sum := 0.0
	for _, p := range used {
		sum += p
	}
	r.PullMean = sum / float64(n)
	if n > 1 {
		ss := 0.0
		for _, p := range used {
			ss += (p - r.PullMean) * (p - r.PullMean)
		}
		r.PullWidth = math.Sqrt(ss / float64(n-1))
		r.PullMeanErr = r.PullWidth / math.Sqrt(float64(n))
		r.PullWidthEr = r.PullWidth / math.Sqrt(2*float64(n-1))
	}
	r.MaxPullP = SidakP(r.MaxAbsPull, n)
	// The runs test uses the signs of the differences of the bins that
	// carry a pull.
	r.RunsPos, r.RunsNeg, r.Runs = stats.Runs(r.withoutZeroSigma(r.Diff))
	r.RunsP = stats.RunsPValue(r.RunsPos, r.RunsNeg, r.Runs)
}

// SidakP is the trials-corrected p-value of the largest |pull| among n:
//
//	1 - (1 - q)^n,  q = 2(1 - Φ(x)) = erfc(x/√2)
//
// evaluated as -expm1(n·log1p(-q)) so small values keep their precision.
func SidakP(x float64, n int) float64 {
	if n <= 0 {
		return 1
	}
	q := math.Erfc(math.Abs(x) / math.Sqrt2)
	if q >= 1 {
		return 1
	}
	return -math.Expm1(float64(n) * math.Log1p(-q))
}
