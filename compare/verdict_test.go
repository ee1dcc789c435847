package compare

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"tandem/compare/table"
)

func sym(v, e []float64) *table.Series {
	return &table.Series{Column: "y", Lo: make([]float64, len(v)), Hi: make([]float64, len(v)), V: v, Down: e, Up: e}
}

// TestNoFalsePass: what could not be compared never passes.
func TestNoFalsePass(t *testing.T) {
	// the subset rule with equal errors leaves σ_d = 0 in every bin
	a := sym([]float64{100, 200, 300}, []float64{10, 14, 17})
	b := sym([]float64{900, 5, 3000}, []float64{10, 14, 17})
	o := Defaults()
	o.Subset = true
	r, err := Series(a, b, o)
	if err != nil {
		t.Fatal(err)
	}
	c := r.Criteria[0]
	if r.Pass || c.Name != CritComparable || c.Pass || !slices.Equal(c.Bins, []int{1, 2, 3}) || !slices.Equal(r.Incomparable, []int{0, 1, 2}) {
		t.Errorf("pass %v, first criterion %+v", r.Pass, c)
	}
	if !math.IsInf(r.Pulls[0], -1) || !math.IsInf(r.Pulls[1], 1) {
		t.Errorf("pulls of d ≠ 0 over σ_d = 0 must be ±Inf, got %v", r.Pulls)
	}
	// equal values and zero errors: ndf = 0 fails
	r, err = Series(sym([]float64{1, 2}, []float64{0, 0}), sym([]float64{1, 2}, []float64{0, 0}), Defaults())
	if err != nil {
		t.Fatal(err)
	}
	if r.Pass || r.NDF != 0 || !strings.Contains(r.Criteria[0].Detail, "ndf = 0") {
		t.Errorf("ndf = 0 passed: %+v", r.Criteria[0])
	}
	// no uncertainty: a typed error; with a tolerance, the tolerance judges
	noErr := func(v ...float64) *table.Series { return &table.Series{Column: "y", V: v} }
	if _, err := Series(noErr(10, 20), noErr(50, 70), Defaults()); !errors.Is(err, ErrNoUncertainty) {
		t.Errorf("no uncertainty: %v", err)
	}
	o = Defaults()
	o.AbsTol = 1
	if r, err := Series(noErr(10, 20), noErr(10.5, 20), o); err != nil || !r.Pass || len(r.Criteria) != 1 {
		t.Errorf("tolerance alone: %v, %+v", err, r)
	}
	// no criterion left
	o = Defaults()
	o.Alpha = 0
	if _, err := Series(a, b, o); !errors.Is(err, ErrNoCriterion) {
		t.Errorf("no criterion: %v", err)
	}
	// an overflowing pull is +Inf, honestly, and fails
	r, err = Series(sym([]float64{1e300}, []float64{1e-300}), sym([]float64{0}, []float64{1e-300}), Defaults())
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsInf(r.Pulls[0], 1) || r.Pass || r.NDF != 1 {
		t.Errorf("overflowing pull %v, ndf %d, pass %v", r.Pulls[0], r.NDF, r.Pass)
	}
}

// TestHolm checks AdjustFamily against Holm's procedure worked by hand:
// p = 0.01, 0.04, 0.03, 0.005 (m = 4) give adjusted 0.03, 0.06, 0.06, 0.02
// (sorted 0.005, 0.01, 0.03, 0.04 → 4·0.005, 3·0.01, max(2·0.03, ·), max(0.04, 0.06)).
func TestHolm(t *testing.T) {
	r := &Result{Criteria: []Criterion{
		{Name: "a", Kind: KindPValue, Value: 0.01}, {Name: "b", Kind: KindPValue, Value: 0.04},
		{Name: "c", Kind: KindPValue, Value: 0.03}, {Name: "tol", Kind: KindTolerance, Value: 0.5, Pass: true},
	}}
	r2 := &Result{Criteria: []Criterion{{Name: "d", Kind: KindPValue, Value: 0.005}}}
	if err := AdjustFamily([]*Result{r, r2}, 0.05); err != nil {
		t.Fatal(err)
	}
	want := []float64{0.03, 0.06, 0.06}
	for i, w := range want {
		if got := *r.Criteria[i].Adjusted; math.Abs(got-w) > 1e-15 {
			t.Errorf("%s: adjusted %v, want %v", r.Criteria[i].Name, got, w)
		}
	}
	if got := *r2.Criteria[0].Adjusted; math.Abs(got-0.02) > 1e-15 {
		t.Errorf("d: adjusted %v, want 0.02", got)
	}
	if r.Criteria[3].Adjusted != nil || r.Family != 4 || r2.Family != 4 {
		t.Errorf("tolerance adjusted or family size wrong: %+v, %d", r.Criteria[3], r.Family)
	}
	if r.Pass || !r.Criteria[1].Pass || r.Criteria[0].Pass || r2.Pass {
		t.Errorf("at α = 0.05, a (0.03) and d (0.02) fail, b and c pass: %+v %+v", r.Criteria, r2.Criteria)
	}
	if err := AdjustFamily([]*Result{r}, 0); err == nil {
		t.Error("alpha 0 accepted with p-value criteria")
	}
}

// TestHolmNaN: an undefined p-value never passes, and AdjustFamily follows
// the same rule as the cut-flow tests of compare/events because both call
// stats.Holm: the NaN criterion fails with adjusted p 0, and still counts
// in the family: m = 3, and the NaN sorts first, so 0.3 and 0.4 are
// adjusted to 2·0.3 and max(0.4, 0.6).
func TestHolmNaN(t *testing.T) {
	r := &Result{Criteria: []Criterion{
		{Name: "undefined", Kind: KindPValue, Value: math.NaN()}, {Name: "fine", Kind: KindPValue, Value: 0.3},
		{Name: "also", Kind: KindPValue, Value: 0.4},
	}}
	if err := AdjustFamily([]*Result{r}, 0.01); err != nil {
		t.Fatal(err)
	}
	if c := r.Criteria[0]; c.Pass || *c.Adjusted != 0 || c.Detail != c.why {
		t.Errorf("NaN p-value: pass %v, adjusted %v, detail %q", c.Pass, *c.Adjusted, c.Detail)
	}
	for _, c := range r.Criteria[1:] {
		if !c.Pass || math.Abs(*c.Adjusted-0.6) > 1e-15 {
			t.Errorf("%s beside a NaN: pass %v, adjusted %v, want 0.6", c.Name, c.Pass, *c.Adjusted)
		}
	}
	if r.Pass || r.Family != 3 {
		t.Errorf("result passes (%v) or family %d != 3", r.Pass, r.Family)
	}
}

// TestCovarianceFromCorrelation: with diagonal covariance matrices, a
// declared ρ gives C = ρ L_a L_bᵀ = diag(ρ σ_a σ_b): χ² equals the per-bin
// Σ p_i² with the same ρ. A blinding map (V_ij scaled by s_i s_j) leaves χ²
// unchanged to 1e-12 with a full covariance and ρ.
func TestCovarianceFromCorrelation(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	const n = 15
	a, b := randomPair(rng, n)
	o := Defaults()
	o.Default = Number(0.45)
	r1, err := Series(a, b, o)
	if err != nil {
		t.Fatal(err)
	}
	oc := o
	oc.CovA, oc.CovB = covOf(a, 0), covOf(b, 0)
	r2, err := Series(a, b, oc)
	if err != nil {
		t.Fatal(err)
	}
	if !near(r2.Chi2, r1.Chi2, 1e-12) {
		t.Errorf("χ² with C from ρ %v, per-bin %v", r2.Chi2, r1.Chi2)
	}
	for i := range r1.Pulls {
		if !near(r2.Pulls[i], r1.Pulls[i], 1e-12) {
			t.Errorf("bin %d: pull %v, per-bin %v", i, r2.Pulls[i], r1.Pulls[i])
		}
	}
	scale, offset := make([]float64, n), make([]float64, n)
	for i := range scale {
		scale[i], offset[i] = 0.3+0.2*float64(i%7), 100*float64(i%3)
	}
	oc.CovA, oc.CovB = covOf(a, 0.3), covOf(b, 0.25)
	ob := oc
	ob.CovA, ob.CovB = scaleCov(oc.CovA, scale), scaleCov(oc.CovB, scale)
	t1, err := Series(a, b, oc)
	if err != nil {
		t.Fatal(err)
	}
	t2, err := Series(affine(a, scale, offset), affine(b, scale, offset), ob)
	if err != nil {
		t.Fatal(err)
	}
	if !near(t2.Chi2, t1.Chi2, 1e-12) || !near(t2.PValue, t1.PValue, 1e-12) {
		t.Errorf("blinded χ² %v (p %v), true %v (p %v)", t2.Chi2, t2.PValue, t1.Chi2, t1.PValue)
	}
}

// TestIllConditioned: a nearly singular W is warned about with its
// condition number; a W that is not positive definite is an error naming
// its smallest eigenvalue.
func TestIllConditioned(t *testing.T) {
	a, b := sym([]float64{1, 2}, []float64{1, 1}), sym([]float64{1.1, 1.9}, []float64{1, 1})
	o := Defaults()
	o.CovA = mat.NewSymDense(2, []float64{1, 1 - 1e-12, 1 - 1e-12, 1})
	o.CovB = mat.NewSymDense(2, []float64{1, 1 - 1e-12, 1 - 1e-12, 1})
	r, err := Series(a, b, o)
	if err != nil {
		t.Fatal(err)
	}
	if r.Condition < 1e11 || !slices.ContainsFunc(r.Warnings, func(w string) bool { return strings.Contains(w, "condition number") }) {
		t.Errorf("condition %v, warnings %v", r.Condition, r.Warnings)
	}
	o.CovCross = mat.NewDense(2, 2, []float64{2, 0, 0, 2})
	_, err = Series(a, b, o)
	if !errors.Is(err, ErrNotPositiveDefinite) || !strings.Contains(err.Error(), "smallest eigenvalue is -4") {
		t.Errorf("want ErrNotPositiveDefinite with its eigenvalue, got %v", err)
	}
}

// TestBadShapes: matrices and error columns of the wrong size are errors,
// not panics.
func TestBadShapes(t *testing.T) {
	a, b := sym([]float64{1, 2}, []float64{1, 1}), sym([]float64{1.1, 1.9}, []float64{1, 1})
	o := Defaults()
	o.CovA, o.CovB = mat.NewSymDense(2, []float64{1, 0, 0, 1}), mat.NewSymDense(2, []float64{1, 0, 0, 1})
	o.CovCross = mat.NewDense(3, 3, nil)
	if _, err := Series(a, b, o); err == nil || !strings.Contains(err.Error(), "cross-covariance is 3×3") {
		t.Errorf("wrong cross-covariance size: %v", err)
	}
	o.CovCross, o.CovB = nil, mat.NewSymDense(3, nil)
	if _, err := Series(a, b, o); err == nil {
		t.Error("wrong covariance size accepted")
	}
	short := sym([]float64{1, 2}, []float64{1})
	if _, err := Series(a, short, Defaults()); err == nil {
		t.Error("short error column accepted")
	}
}
