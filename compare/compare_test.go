package compare

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"tandem/compare/table"
)

func near(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Max(math.Abs(want), 1e-300) || got == want
}

type scipyComparison struct {
	A, B         string
	Value        string
	Errors       []string
	Correlations map[string]float64
	Pulls        []float64
	Chi2         float64
	NDF          int
	PValue       float64 `json:"p_value"`
	PullMean     float64 `json:"pull_mean"`
	PullWidth    float64 `json:"pull_width"`
	KSStat       float64 `json:"ks_statistic"`
	KSP          float64 `json:"ks_p_value"`
	Runs         int
	RunsP        float64 `json:"runs_p_value"`
	MaxAbsPull   float64 `json:"max_abs_pull"`
	MaxPullP     float64 `json:"max_pull_p_value"`
}

// TestAgainstScipy compares two tables end to end, each error column a
// source with its own correlation, and checks every number against
// testdata/reference/scipy_values.json, computed from the same CSV files by
// pandas and scipy (scipy.stats.chi2, kstest(method="exact"),
// norm) in testdata/reference/make_scipy_reference.py.
func TestAgainstScipy(t *testing.T) {
	data, err := os.ReadFile("../testdata/reference/scipy_values.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Comparisons []scipyComparison
	}
	if err := json.Unmarshal(data, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Comparisons) == 0 {
		t.Fatal("no reference comparisons")
	}
	for _, c := range ref.Comparisons {
		a, err := table.ReadFile("../"+c.A, table.CSVOptions{})
		if err != nil {
			t.Fatal(err)
		}
		b, err := table.ReadFile("../"+c.B, table.CSVOptions{})
		if err != nil {
			t.Fatal(err)
		}
		opt := Defaults()
		opt.Correlations = map[string]Rho{}
		for k, v := range c.Correlations {
			opt.Correlations[k] = Number(v)
		}
		rs, err := Columns(a, b, []Selection{{Value: c.Value, Errors: c.Errors}}, opt)
		if err != nil {
			t.Fatal(err)
		}
		r := rs[0]
		for i, p := range c.Pulls {
			if !near(r.Pulls[i], p, 1e-12) {
				t.Errorf("ρ=%v pull %d = %v, scipy %v", c.Correlations, i, r.Pulls[i], p)
			}
		}
		checks := []struct {
			name      string
			got, want float64
			rel       float64
		}{
			{"chi2", r.Chi2, c.Chi2, 1e-12},
			{"ndf", float64(r.NDF), float64(c.NDF), 0},
			{"p", r.PValue, c.PValue, 1e-9},
			{"pull mean", r.PullMean, c.PullMean, 1e-10},
			{"pull width", r.PullWidth, c.PullWidth, 1e-12},
			{"KS D", r.KSStat, c.KSStat, 1e-12},
			{"KS p", r.KSP, c.KSP, 1e-6},
			{"runs", float64(r.Runs), float64(c.Runs), 0},
			{"runs p", r.RunsP, c.RunsP, 1e-10},
			{"max |pull|", r.MaxAbsPull, c.MaxAbsPull, 1e-12},
			{"max-pull p", r.MaxPullP, c.MaxPullP, 1e-10},
		}
		for _, k := range checks {
			if !near(k.got, k.want, k.rel) {
				t.Errorf("ρ=%v %s = %.15g, scipy %.15g", c.Correlations, k.name, k.got, k.want)
			}
		}
	}
}

// randomPair makes two agreeing tables of n bins with a true curve and
// Gaussian noise of the stated errors.
func randomPair(rng *rand.Rand, n int) (*table.Series, *table.Series) {
	mk := func() *table.Series {
		s := &table.Series{Column: "y", Lo: make([]float64, n), Hi: make([]float64, n), V: make([]float64, n)}
		e := make([]float64, n)
		for i := 0; i < n; i++ {
			s.Lo[i], s.Hi[i] = float64(i), float64(i+1)
			truth := 50 * math.Exp(-0.05*float64(i))
			e[i] = math.Sqrt(truth)
			s.V[i] = truth + e[i]*rng.NormFloat64()
		}
		s.Down, s.Up = e, e
		return s
	}
	return mk(), mk()
}

func affine(s *table.Series, scale, offset []float64) *table.Series {
	out := &table.Series{Column: s.Column, Lo: s.Lo, Hi: s.Hi, V: make([]float64, len(s.V)), Down: make([]float64, len(s.V))}
	for i := range s.V {
		out.V[i] = scale[i]*s.V[i] + offset[i]
		out.Down[i] = math.Abs(scale[i]) * s.Down[i]
	}
	out.Up = out.Down
	return out
}

// TestAffineInvariance: the blinding map v' = s·v + o (errors ×|s|), the
// same for both chains, leaves pulls, χ² and every p-value unchanged, for a
// global map and for a per-bin (shape) map, with and without covariance
// matrices (V'_ij = s_i s_j V_ij).
func TestAffineInvariance(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	const n = 30
	a, b := randomPair(rng, n)
	for _, perBin := range []bool{false, true} {
		scale, offset := make([]float64, n), make([]float64, n)
		for i := range scale {
			k := 0
			if perBin {
				k = i
			}
			scale[i] = 0.5 + 1.5*float64((k*7919)%13)/13
			offset[i] = -300 + 17*float64((k*104729)%11)
		}
		for _, withCov := range []bool{false, true} {
			opt := Options{Correlation: 0.3, Limits: DefaultLimits}
			optB := opt
			if withCov {
				va, vb := covOf(a, 0.2), covOf(b, 0.2)
				opt = Options{CovA: va, CovB: vb, Limits: DefaultLimits}
				optB = Options{CovA: scaleCov(va, scale), CovB: scaleCov(vb, scale), Limits: DefaultLimits}
			}
			r1, err := Series(a, b, opt)
			if err != nil {
				t.Fatal(err)
			}
			r2, err := Series(affine(a, scale, offset), affine(b, scale, offset), optB)
			if err != nil {
				t.Fatal(err)
			}
			for i := range r1.Pulls {
				if !near(r2.Pulls[i], r1.Pulls[i], 1e-9) {
					t.Errorf("perBin=%v cov=%v: pull %d %v != %v", perBin, withCov, i, r2.Pulls[i], r1.Pulls[i])
				}
			}
			for _, k := range [][3]any{
				{"chi2", r1.Chi2, r2.Chi2}, {"p", r1.PValue, r2.PValue}, {"KS p", r1.KSP, r2.KSP},
				{"runs p", r1.RunsP, r2.RunsP}, {"max p", r1.MaxPullP, r2.MaxPullP},
			} {
				if !near(k[2].(float64), k[1].(float64), 1e-9) {
					t.Errorf("perBin=%v cov=%v: %s %v != %v", perBin, withCov, k[0], k[2], k[1])
				}
			}
		}
	}
}

// covOf builds a covariance with the series' errors on the diagonal and a
// correlation rho between neighbours.
func covOf(s *table.Series, rho float64) *mat.SymDense {
	n := len(s.V)
	c := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		c.SetSym(i, i, s.Down[i]*s.Down[i])
		if i+1 < n {
			c.SetSym(i, i+1, rho*s.Down[i]*s.Down[i+1])
		}
	}
	return c
}

func scaleCov(v *mat.SymDense, s []float64) *mat.SymDense {
	n := v.SymmetricDim()
	out := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			out.SetSym(i, j, s[i]*s[j]*v.At(i, j))
		}
	}
	return out
}

// TestSwap: comparing B with A flips the pull signs and nothing else.
func TestSwap(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	a, b := randomPair(rng, 25)
	r1, _ := Series(a, b, Options{Correlation: 0.2, Limits: DefaultLimits})
	r2, _ := Series(b, a, Options{Correlation: 0.2, Limits: DefaultLimits})
	for i := range r1.Pulls {
		if r1.Pulls[i] != -r2.Pulls[i] {
			t.Errorf("pull %d: %v vs %v", i, r1.Pulls[i], r2.Pulls[i])
		}
	}
	if r1.Chi2 != r2.Chi2 || r1.PValue != r2.PValue || r1.MaxPullP != r2.MaxPullP || !near(r1.RunsP, r2.RunsP, 1e-12) ||
		!near(r1.KSP, r2.KSP, 1e-12) || r1.PullWidth != r2.PullWidth || r1.PullMean != -r2.PullMean {
		t.Errorf("swap changed statistics: χ² %v/%v p %v/%v runs p %v/%v KS p %v/%v mean %v/%v",
			r1.Chi2, r2.Chi2, r1.PValue, r2.PValue, r1.RunsP, r2.RunsP, r1.KSP, r2.KSP, r1.PullMean, r2.PullMean)
	}
}

// TestEnsembleUniform: for agreeing tables the χ², KS and largest-pull
// p-values are uniform. A χ² goodness-of-fit over 10 deciles of 2000 fixed-
// seed trials must not reject at 0.1%. (The runs test is discrete and its
// one-sided p-value is only super-uniform: P(p <= α) <= α is checked.)
func TestEnsembleUniform(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	const trials, bins = 2000, 40
	var chi, ks, mx []float64
	runsLow := 0
	for k := 0; k < trials; k++ {
		a, b := randomPair(rng, bins)
		r, err := Series(a, b, Options{Limits: DefaultLimits})
		if err != nil {
			t.Fatal(err)
		}
		chi, ks, mx = append(chi, r.PValue), append(ks, r.KSP), append(mx, r.MaxPullP)
		if r.RunsP <= 0.05 {
			runsLow++
		}
	}
	for name, ps := range map[string][]float64{"chi2": chi, "KS": ks, "max-pull": mx} {
		counts := make([]float64, 10)
		for _, p := range ps {
			counts[min(int(p*10), 9)]++
		}
		stat := 0.0
		for _, c := range counts {
			stat += (c - trials/10.0) * (c - trials/10.0) / (trials / 10.0)
		}
		if p := (distuv.ChiSquared{K: 9}).Survival(stat); p < 1e-3 {
			t.Errorf("%s p-values not uniform: deciles %v (gof p = %v)", name, counts, p)
		}
	}
	// Binomial(2000, 0.05) has mean 100 and sd 9.7: allow 3.5 sd above.
	if runsLow > 134 {
		t.Errorf("runs p <= 0.05 in %d of %d trials", runsLow, trials)
	}
}

func TestTrendFailsRuns(t *testing.T) {
	// A smooth relative slope between chains: pulls small but one-signed
	// halves, so the runs test catches it while max |pull| does not.
	const n = 40
	a := &table.Series{Column: "y", V: make([]float64, n), Down: make([]float64, n)}
	b := &table.Series{Column: "y", V: make([]float64, n), Down: make([]float64, n)}
	for i := 0; i < n; i++ {
		a.V[i] = 100
		b.V[i] = 100 + 1.5*(float64(i)-19.5)/19.5
		a.Down[i], b.Down[i] = 1, 1
	}
	a.Up, b.Up = a.Down, b.Down
	r, err := Series(a, b, Options{Limits: DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	if r.Runs != 2 || r.RunsP > 1e-9 || r.Pass {
		t.Errorf("runs = %d, p = %v, pass = %v", r.Runs, r.RunsP, r.Pass)
	}
	names := []string{}
	for _, c := range r.Criteria {
		names = append(names, c.Name)
	}
	if want := []string{CritComparable, CritChi2, CritKS, CritRuns, CritMaxPullP}; !slices.Equal(names, want) {
		t.Errorf("criteria %v, want the fixed order %v", names, want)
	}
}

func TestBarlowAndZeroSigma(t *testing.T) {
	a := &table.Series{V: []float64{10, 5, 3}, Down: []float64{2, 1, 0}}
	b := &table.Series{V: []float64{9, 5, 3}, Down: []float64{1.5, 1, 0}}
	a.Up, b.Up = a.Down, b.Down
	r, err := Series(a, b, Options{Subset: true, Limits: DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	// bin 1: σ_d² = |4 - 2.25| = 1.75 (Barlow); bins 2 and 3 have σ_d = 0.
	if !near(r.Pulls[0], 1/math.Sqrt(1.75), 1e-15) {
		t.Errorf("Barlow pull = %v", r.Pulls[0])
	}
	if !slices.Equal(r.ZeroSigma, []int{1, 2}) || r.NDF != 1 {
		t.Errorf("zero-σ bins %v, ndf %d", r.ZeroSigma, r.NDF)
	}
}

func TestAsymmetricFacingErrors(t *testing.T) {
	// a above b: a's lower error and b's upper error face each other.
	a := &table.Series{V: []float64{12}, Down: []float64{3}, Up: []float64{1}}
	b := &table.Series{V: []float64{10}, Down: []float64{0.5}, Up: []float64{4}}
	r, err := Series(a, b, Options{Limits: DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	if want := 2 / math.Sqrt(9+16); !near(r.Pulls[0], want, 1e-15) || !r.Asymmetric {
		t.Errorf("pull = %v, want %v; asymmetric = %v", r.Pulls[0], want, r.Asymmetric)
	}
}

func TestCovarianceMatchesDiagonal(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	a, b := randomPair(rng, 12)
	r1, _ := Series(a, b, Options{Limits: DefaultLimits})
	r2, err := Series(a, b, Options{CovA: covOf(a, 0), CovB: covOf(b, 0), Limits: DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	if !near(r2.Chi2, r1.Chi2, 1e-12) {
		t.Errorf("diagonal covariance χ² %v != Σ pull² %v", r2.Chi2, r1.Chi2)
	}
	bad := mat.NewSymDense(12, nil)
	bad.SetSym(0, 0, -1)
	if _, err := Series(a, b, Options{CovA: bad, CovB: mat.NewSymDense(12, nil), Limits: DefaultLimits}); !errors.Is(err, ErrNotPositiveDefinite) {
		t.Errorf("want ErrNotPositiveDefinite, got %v", err)
	}
}

func TestNumericalTolerance(t *testing.T) {
	a := &table.Series{V: []float64{1, 2, 1000}, Down: []float64{1, 1, 1}}
	b := &table.Series{V: []float64{1, 2.0000001, 1000.01}, Down: []float64{1, 1, 1}}
	a.Up, b.Up = a.Down, b.Down
	r, _ := Series(a, b, Options{Limits: Limits{AbsTol: 1e-6, RelTol: 1e-6}})
	if r.Pass {
		t.Errorf("1000 vs 1000.01 is beyond max(1e-6, 1e-6·1000.01)")
	}
	r, _ = Series(a, b, Options{Limits: Limits{AbsTol: 1e-6, RelTol: 1e-5}})
	if !r.Pass {
		t.Errorf("all within tolerance: %v", r.Failures())
	}
}

func TestSidak(t *testing.T) {
	// n = 1 reduces to the two-sided normal tail: 2(1 - Φ(1.96)) = 0.05
	// (NIST/SEMATECH e-Handbook 1.3.6.7.1, z = 1.96).
	if p := SidakP(1.959964, 1); !near(p, 0.05, 1e-5) {
		t.Errorf("SidakP(1.96, 1) = %v", p)
	}
	if p := SidakP(0, 100); p != 1 {
		t.Errorf("SidakP(0, 100) = %v", p)
	}
}
