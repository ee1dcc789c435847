// Package compare judges whether two analysis chains agree on a binned
// result.
//
// For bin i of a compared column, with values a_i, b_i and uncertainties
// σ_a,i, σ_b,i, the difference, its uncertainty and the pull are
//
//	d_i   = a_i - b_i
//	σ_d,i² = σ_a,i² + σ_b,i² - 2 ρ σ_a,i σ_b,i      (default)
//	σ_d,i² = |σ_a,i² - σ_b,i²|                      (Barlow's rule, one sample a subset of the other)
//	p_i   = d_i / σ_d,i
//
// where ρ is the declared correlation of the two chains' errors. When full
// covariance matrices are given, χ² uses W = V_a + V_b - C - Cᵀ, with C the
// cross-covariance, and is computed through a Cholesky factorisation:
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
// exact one-sample Kolmogorov–Smirnov test against N(0,1), the exact one-sided
// Wald–Wolfowitz runs test on the signs of d_i (zeros dropped), and the
// largest |p_i| with its Šidák trials-corrected p-value
//
//	p_max = 1 - (1 - 2(1 - Φ(|p|max)))^n
//
// Tolerances and the verdict are described in [Limits].
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

// Limits are the declared tolerances of one comparison.
type Limits struct {
	// MaxPull is the largest allowed |pull|; 0 disables the criterion.
	MaxPull float64
	// MinP is the smallest allowed p-value, applied to the χ², KS, runs and
	// trials-corrected largest-pull p-values; 0 disables those criteria.
	MinP float64
	// AbsTol and RelTol, when either is set, require numerical agreement in
	// every bin:
	//
	//	|a_i - b_i| <= max(AbsTol, RelTol · max(|a_i|, |b_i|))
	AbsTol, RelTol float64
}

// DefaultLimits are the limits used when none are declared.
var DefaultLimits = Limits{MaxPull: 3, MinP: 0.01}

// Options controls how the uncertainties of the two chains are combined.
type Options struct {
	// Correlation is ρ, the correlation between the two chains' errors.
	Correlation float64
	// Subset selects Barlow's rule for one sample being a subset of the other.
	Subset bool
	// CovA and CovB are optional covariance matrices (n×n) of the two
	// chains; when both are given, χ² is computed from them. CovCross is the
	// optional cross-covariance C between the chains (C_ij = cov(a_i, b_j)).
	CovA, CovB *mat.SymDense
	CovCross   *mat.Dense
	Limits     Limits
}

// Criterion is one test of the verdict.
type Criterion struct {
	Name  string  `json:"name"`
	Value float64 `json:"value"`
	// Limit is the bound the value is held to; Op says how ("<=" or ">=").
	Limit float64 `json:"limit"`
	Op    string  `json:"op"`
	Pass  bool    `json:"pass"`
	// Detail explains a failure in words.
	Detail string `json:"detail,omitempty"`
}

// Result is the outcome of comparing one column between two chains.
type Result struct {
	Column      string    `json:"column"`
	Bins        int       `json:"bins"`
	Lo          []float64 `json:"-"`
	Hi          []float64 `json:"-"`
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
	ZeroSigma  []int       `json:"zero_sigma_bins,omitempty"`
	Covariance bool        `json:"covariance"`
	Asymmetric bool        `json:"asymmetric_errors"`
	Criteria   []Criterion `json:"criteria"`
	Warnings   []string    `json:"warnings,omitempty"`
	Pass       bool        `json:"-"`
}

// ErrNotPositiveDefinite is returned when W is not positive definite.
var ErrNotPositiveDefinite = errors.New("combined covariance W = Va + Vb - C - Cᵀ is not positive definite")

// Series compares two series bin by bin. The series must have the same bins
// (see [table.SameEdges]); the caller checks the edges, since it knows the
// file names and the edge tolerance.
func Series(a, b *table.Series, opt Options) (*Result, error) {
	n := len(a.V)
	if n != len(b.V) {
		return nil, fmt.Errorf("tables have %d and %d bins", n, len(b.V))
	}
	if n == 0 {
		return nil, errors.New("no bins to compare")
	}
	if opt.Correlation < -1 || opt.Correlation > 1 || math.IsNaN(opt.Correlation) {
		return nil, fmt.Errorf("correlation %v is outside [-1, 1]", opt.Correlation)
	}
	r := &Result{
		Column: a.Column, Bins: n, Lo: a.Lo, Hi: a.Hi, A: a.V, B: b.V,
		Diff: make([]float64, n), SigmaDiff: make([]float64, n), Pulls: make([]float64, n),
		Asymmetric: a.Asymmetric() || b.Asymmetric(),
	}
	if r.Asymmetric {
		// the error used on each side depends on the sign of the difference
		r.ErrA, r.ErrB = make([]float64, n), make([]float64, n)
	} else {
		r.ErrA, r.ErrB = a.Down, b.Down
	}
	// Bins are independent: large tables are split over the cores, each
	// part collecting its own zero-σ bins, merged in order afterwards.
	parts := splitRange(n)
	zeros := make([][]int, len(parts))
	var wg sync.WaitGroup
	for k, pr := range parts {
		wg.Add(1)
		go func() {
			defer wg.Done()
			zeros[k] = r.pulls(a, b, opt, pr[0], pr[1])
		}()
	}
	wg.Wait()
	for _, z := range zeros {
		r.ZeroSigma = append(r.ZeroSigma, z...)
	}
	used := r.withoutZeroSigma(r.Pulls)
	r.NDF = len(used)
	if opt.CovA != nil && opt.CovB != nil {
		chi2, err := covChi2(r, opt)
		if err != nil {
			return nil, err
		}
		r.Chi2, r.Covariance = chi2, true
	} else {
		for _, p := range used {
			r.Chi2 += p * p
		}
	}
	shape(r, used)
	r.warn(opt)
	r.judge(opt.Limits)
	return r, nil
}

// pulls fills differences, combined uncertainties and pulls for bins
// [lo, hi) and returns the bins whose combined uncertainty is zero.
func (r *Result) pulls(a, b *table.Series, opt Options, lo, hi int) []int {
	var zero []int
	rho := opt.Correlation
	for i := lo; i < hi; i++ {
		d := a.V[i] - b.V[i]
		sa, sb := a.Up[i], b.Down[i]
		if d > 0 {
			sa, sb = a.Down[i], b.Up[i]
		}
		var v float64
		if opt.Subset {
			v = math.Abs(sa*sa - sb*sb)
		} else {
			v = sa*sa + sb*sb - 2*rho*sa*sb
		}
		if opt.CovA != nil && opt.CovB != nil {
			v = opt.CovA.At(i, i) + opt.CovB.At(i, i)
			if opt.CovCross != nil {
				v -= 2 * opt.CovCross.At(i, i)
			}
		}
		if r.Asymmetric {
			r.ErrA[i], r.ErrB[i] = sa, sb
		}
		r.Diff[i] = d
		if v <= 0 || math.IsNaN(v) {
			zero = append(zero, i)
			continue
		}
		r.SigmaDiff[i] = math.Sqrt(v)
		r.Pulls[i] = d / r.SigmaDiff[i]
	}
	return zero
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

// covChi2 computes dᵀ W⁻¹ d over all bins by Cholesky factorisation.
func covChi2(r *Result, opt Options) (float64, error) {
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
		return 0, ErrNotPositiveDefinite
	}
	d := mat.NewVecDense(n, slices.Clone(r.Diff))
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, d); err != nil {
		return 0, fmt.Errorf("solving with W: %w", err)
	}
	return mat.Dot(d, &x), nil
}

// shape fills the pull-distribution statistics from the used pulls.
func shape(r *Result, used []float64) {
	n := len(used)
	r.PValue = 1
	r.KSP, r.RunsP, r.MaxPullP = 1, 1, 1
	if n == 0 {
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
	if r.NDF > 0 {
		r.PValue = distuv.ChiSquared{K: float64(r.NDF)}.Survival(r.Chi2)
	}
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
	r.MaxPullBin = -1
	for i, p := range r.Pulls {
		if a := math.Abs(p); a > r.MaxAbsPull || r.MaxPullBin < 0 {
			r.MaxAbsPull, r.MaxPullBin = a, i
		}
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

func (r *Result) warn(opt Options) {
	if opt.Correlation == 0 && !opt.Subset && !r.Covariance {
		r.Warnings = append(r.Warnings,
			"correlation of the two chains' errors taken as 0: if both chains use the same events, the pulls are too small and the test too lenient; declare the correlation")
	}
	if len(r.ZeroSigma) > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%d bin(s) with zero combined uncertainty left out of the pulls and χ²", len(r.ZeroSigma)))
	}
	if r.Asymmetric {
		r.Warnings = append(r.Warnings, "asymmetric errors: each side uses the error that faces the other value")
	}
	if r.Bins > 1 && len(r.ZeroSigma) == r.Bins-1 {
		r.Warnings = append(r.Warnings, "only one bin carries a pull: no pull width")
	}
}

// judge applies the limits and fills Criteria (failures first) and Pass.
func (r *Result) judge(l Limits) {
	var cs []Criterion
	add := func(name string, value, limit float64, op, detail string) {
		pass := value <= limit
		if op == ">=" {
			pass = value >= limit
		}
		c := Criterion{Name: name, Value: value, Limit: limit, Op: op, Pass: pass}
		if !pass {
			c.Detail = detail
		}
		cs = append(cs, c)
	}
	if l.MaxPull > 0 {
		add("max |pull|", r.MaxAbsPull, l.MaxPull, "<=",
			fmt.Sprintf("bin %d has pull %s", r.MaxPullBin+1, fmtG(r.Pulls[max(r.MaxPullBin, 0)])))
	}
	if l.MinP > 0 {
		add("chi2 p-value", r.PValue, l.MinP, ">=", fmt.Sprintf("χ² = %s for %d degrees of freedom", fmtG(r.Chi2), r.NDF))
		add("KS p-value", r.KSP, l.MinP, ">=", fmt.Sprintf("pulls are not distributed as N(0,1): D = %s", fmtG(r.KSStat)))
		add("runs p-value", r.RunsP, l.MinP, ">=", fmt.Sprintf("%d runs in %d positive and %d negative differences: a coherent trend", r.Runs, r.RunsPos, r.RunsNeg))
		add("max-pull p-value", r.MaxPullP, l.MinP, ">=", fmt.Sprintf("|pull| %s is unlikely among %d bins", fmtG(r.MaxAbsPull), r.NDF))
	}
	if l.AbsTol > 0 || l.RelTol > 0 {
		worst, worstBin, bad := 0.0, 0, 0
		for i := range r.A {
			tol := math.Max(l.AbsTol, l.RelTol*math.Max(math.Abs(r.A[i]), math.Abs(r.B[i])))
			ex := math.Abs(r.Diff[i])
			if ex > tol {
				bad++
			}
			// ratio of the difference to the allowed tolerance
			q := math.Inf(1)
			if tol > 0 {
				q = ex / tol
			} else if ex == 0 {
				q = 0
			}
			if q > worst || i == 0 {
				worst, worstBin = q, i
			}
		}
		c := Criterion{Name: "numerical tolerance (|a-b| / allowed)", Value: worst, Limit: 1, Op: "<=", Pass: bad == 0}
		if !c.Pass {
			c.Detail = fmt.Sprintf("%d bin(s) beyond tolerance; worst is bin %d (a = %s, b = %s)", bad, worstBin+1, fmtG(r.A[worstBin]), fmtG(r.B[worstBin]))
		}
		cs = append(cs, c)
	}
	slices.SortStableFunc(cs, func(x, y Criterion) int {
		switch {
		case x.Pass == y.Pass:
			return 0
		case !x.Pass:
			return -1
		}
		return 1
	})
	r.Criteria = cs
	r.Pass = true
	for _, c := range cs {
		r.Pass = r.Pass && c.Pass
	}
}

// Failures lists the failed criteria in words.
func (r *Result) Failures() []string {
	out := []string{}
	for _, c := range r.Criteria {
		if !c.Pass {
			out = append(out, fmt.Sprintf("%s %s not %s %s: %s", c.Name, fmtG(c.Value), c.Op, fmtG(c.Limit), c.Detail))
		}
	}
	return out
}

func fmtG(v float64) string { return fmt.Sprintf("%.4g", v) }
