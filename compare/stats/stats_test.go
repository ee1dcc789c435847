package stats

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// scipyValues is testdata/reference/scipy_values.json, produced by
// testdata/reference/make_scipy_reference.py with Debian's python3-scipy
// (the versions are recorded in the file).
type scipyValues struct {
	SciPy   string       `json:"scipy"`
	Chi2SF  [][3]float64 `json:"chi2_sf"`
	NormCDF [][2]float64 `json:"norm_cdf"`
	KStwoSF [][3]float64 `json:"kstwo_sf"`
	KSLarge [][3]float64 `json:"kstwo_sf_large"`
	KSDMTW  [][3]float64 `json:"kstwo_sf_dmtw"`
	RunsCDF [][4]float64 `json:"runs_cdf"`
}

func loadScipy(t *testing.T) scipyValues {
	t.Helper()
	data, err := os.ReadFile("../../testdata/reference/scipy_values.json")
	if err != nil {
		t.Fatal(err)
	}
	var v scipyValues
	if err := json.Unmarshal(data, &v); err != nil {
		t.Fatal(err)
	}
	if len(v.KStwoSF) == 0 || len(v.RunsCDF) == 0 {
		t.Fatal("reference file has no KS or runs values")
	}
	return v
}

func close(got, want, rel, abs float64) bool {
	return math.Abs(got-want) <= math.Max(abs, rel*math.Abs(want))
}

// TestKSAgainstScipy checks the exact KS upper tail against
// scipy.stats.kstwo.sf (Simard–L'Ecuyer's method in scipy).
func TestKSAgainstScipy(t *testing.T) {
	ref := loadScipy(t)
	for _, c := range ref.KStwoSF {
		n, d, want := int(c[0]), c[1], c[2]
		got := KSPValue(n, d)
		// MTW's exact branch agrees to ~1e-10; their upper-tail shortcut to
		// about 5 digits, so the tolerance is relative 1e-4 there.
		if !close(got, want, 1e-4, 1e-9) {
			t.Errorf("KSPValue(%d, %v) = %.10g, scipy %s kstwo.sf = %.10g", n, d, got, ref.SciPy, want)
		}
	}
}

// TestKSLargeAgainstScipy: around and beyond n = 10⁴, where KSPValue
// changes method, and up to n = 10⁶, the p-value is within 1e-6 absolute of
// scipy.stats.kstwo.sf and of scipy's exact Durbin-matrix routine
// (testdata/reference/make_scipy_reference.py records the version).
func TestKSLargeAgainstScipy(t *testing.T) {
	ref := loadScipy(t)
	if len(ref.KSLarge) < 100 || len(ref.KSDMTW) == 0 {
		t.Fatal("reference file lacks the large-n KS values")
	}
	worst, maxN, worstN, worstD := 0.0, 0, 0, 0.0
	for _, set := range [][][3]float64{ref.KSLarge, ref.KSDMTW} {
		for _, c := range set {
			n, d, want := int(c[0]), c[1], c[2]
			got := KSPValue(n, d)
			if diff := math.Abs(got - want); diff > 1e-6 {
				t.Errorf("KSPValue(%d, %v) = %.10g, scipy %s: %.10g (off by %.2g)", n, d, got, ref.SciPy, want, diff)
			} else if diff > worst {
				worst, worstN, worstD = diff, n, d
			}
			maxN = max(maxN, n)
		}
	}
	if maxN < 100000 {
		t.Errorf("reference goes only to n = %d", maxN)
	}
	t.Logf("largest difference from scipy %s: %.2g at n = %d, d = %.4g", ref.SciPy, worst, worstN, worstD)
}

// TestPelzGoodExact: above KSExactLimit the Pelz–Good expansion is within
// 1e-7 of the exact matrix method, so the p-value is continuous across the
// switch (the earlier asymptotic form jumped by 1e-3 at its switch, n =
// 10⁴), across the central region (λ = √n·d from
// 0.3 to 1.9; beyond, the matrix method itself takes an upper-tail
// shortcut).
func TestPelzGoodExact(t *testing.T) {
	for _, n := range []int{KSExactLimit + 1, 2 * KSExactLimit, 5 * KSExactLimit} {
		for c := 0.3; c < 1.9; c += 0.1 {
			d := c / math.Sqrt(float64(n))
			ex, pg := 1-mtwCDF(n, d), 1-pelzGood(float64(n), d)
			if math.Abs(ex-pg) > 1e-7 {
				t.Errorf("n = %d, λ = %.1f: Pelz–Good %.10g, exact %.10g", n, c, pg, ex)
			}
		}
	}
}

// TestKSCriticalValues checks published two-sided critical values of the
// one-sample KS statistic: L. H. Miller, "Table of percentage points of
// Kolmogorov statistics", JASA 51 (1956) 111–121, as reprinted in common
// statistics tables (values quoted from memory of those tables): at the
// critical value the upper-tail probability equals α.
func TestKSCriticalValues(t *testing.T) {
	cases := []struct {
		n     int
		alpha float64
		d     float64
	}{
		{5, 0.05, 0.56328},
		{10, 0.05, 0.40925},
		{10, 0.01, 0.48893},
		{20, 0.05, 0.29408},
		{20, 0.10, 0.26473},
		{30, 0.05, 0.24170},
	}
	for _, c := range cases {
		got := KSPValue(c.n, c.d)
		if !close(got, c.alpha, 2e-3, 0) {
			t.Errorf("KSPValue(%d, %v) = %.6f, want α = %v (Miller 1956)", c.n, c.d, got, c.alpha)
		}
	}
}

// TestKSLargeN checks the Pelz–Good branch against the exact matrix method
// at n = 10⁴, and, at very large n, the 5% point of the limiting Kolmogorov
// distribution, λ = 1.3581 (standard tables; from memory).
func TestKSLargeN(t *testing.T) {
	exact := 1 - mtwCDF(10000, 0.012)
	if approx := KSPValue(10000, 0.012); !close(approx, exact, 0, 1e-8) {
		t.Errorf("Pelz–Good %v vs exact %v at n = 10⁴", approx, exact)
	}
	const n = 1e12
	if got := KSPValue(n, 1.3581/math.Sqrt(n)); !close(got, 0.05, 1e-3, 0) {
		t.Errorf("p at λ = 1.3581, n = 10¹² is %v, want 0.05", got)
	}
}

func TestKSStatisticSimple(t *testing.T) {
	// One observation at 0: Φ(0) = 1/2, so D = 1/2 (by hand).
	if got := KSStatistic([]float64{0}); got != 0.5 {
		t.Errorf("KSStatistic([0]) = %v, want 0.5", got)
	}
	if KSPValue(1, 0.5) != 1 && !close(KSPValue(1, 0.5), 1, 1e-12, 0) {
		t.Errorf("KSPValue(1, 0.5) = %v, want 1 (D_1 >= 1/2 always)", KSPValue(1, 0.5))
	}
}

// TestRunsAgainstReference checks exact runs probabilities against
// rational-arithmetic sums in the reference script (math.comb).
func TestRunsAgainstReference(t *testing.T) {
	ref := loadScipy(t)
	for _, c := range ref.RunsCDF {
		n1, n2, r, want := int(c[0]), int(c[1]), int(c[2]), c[3]
		if got := RunsPValue(n1, n2, r); !close(got, want, 1e-10, 1e-15) {
			t.Errorf("RunsPValue(%d, %d, %d) = %.12g, want %.12g", n1, n2, r, got, want)
		}
	}
}

// TestRunsSwedEisenhart checks lower critical values of the runs test from
// the Swed–Eisenhart table (Ann. Math. Statist. 14, 1943, table II; as
// reprinted in Siegel's Nonparametric Statistics, table F; from memory):
// the critical value c is the largest r with P(R <= r) <= 0.025.
func TestRunsSwedEisenhart(t *testing.T) {
	cases := []struct{ n1, n2, c int }{
		{5, 5, 2}, {6, 6, 3}, {8, 8, 4}, {10, 10, 6}, {12, 12, 7}, {15, 15, 10}, {20, 20, 14}, {10, 15, 7},
	}
	for _, c := range cases {
		if p := RunsPValue(c.n1, c.n2, c.c); p > 0.025 {
			t.Errorf("n1=%d n2=%d: P(R <= %d) = %.4f, want <= 0.025", c.n1, c.n2, c.c, p)
		}
		if p := RunsPValue(c.n1, c.n2, c.c+1); p <= 0.025 {
			t.Errorf("n1=%d n2=%d: P(R <= %d) = %.4f, want > 0.025", c.n1, c.n2, c.c+1, p)
		}
	}
}

// TestRunsBruteForce enumerates every arrangement for small counts.
func TestRunsBruteForce(t *testing.T) {
	for n1 := 1; n1 <= 6; n1++ {
		for n2 := 1; n2 <= 6; n2++ {
			n := n1 + n2
			counts := map[int]int{}
			total := 0
			for mask := 0; mask < 1<<n; mask++ {
				ones := 0
				for b := 0; b < n; b++ {
					ones += mask >> b & 1
				}
				if ones != n1 {
					continue
				}
				d := make([]float64, n)
				for b := 0; b < n; b++ {
					d[b] = float64(2*(mask>>b&1) - 1)
				}
				_, _, r := Runs(d)
				counts[r]++
				total++
			}
			cum := 0
			for r := 1; r <= n; r++ {
				cum += counts[r]
				want := float64(cum) / float64(total)
				if got := RunsPValue(n1, n2, r); !close(got, want, 1e-12, 1e-14) {
					t.Errorf("RunsPValue(%d,%d,%d) = %v, enumeration %v", n1, n2, r, got, want)
				}
			}
		}
	}
}

func TestRunsCountsDropZeros(t *testing.T) {
	n1, n2, r := Runs([]float64{1, 0, 2, -1, 0, -3, 4})
	if n1 != 3 || n2 != 2 || r != 3 {
		t.Errorf("Runs = %d, %d, %d; want 3, 2, 3", n1, n2, r)
	}
}

// TestGonumDistributions pins the library functions the comparison uses to
// published tables, so a change in gonum would show: NIST/SEMATECH
// e-Handbook of Statistical Methods, section 1.3.6.7.4 (upper critical
// values of the chi-square distribution) and 1.3.6.7.1 (cumulative
// normal), and scipy for a few more.
func TestGonumDistributions(t *testing.T) {
	nist := []struct{ k, alpha, x float64 }{
		{1, 0.05, 3.841}, {1, 0.01, 6.635}, {5, 0.05, 11.070}, {10, 0.05, 18.307},
		{10, 0.01, 23.209}, {20, 0.05, 31.410}, {50, 0.05, 67.505}, {100, 0.05, 124.342}, {100, 0.01, 135.807},
	}
	for _, c := range nist {
		got := distuv.ChiSquared{K: c.k}.Survival(c.x)
		// the table gives three decimals, so compare at the table's precision
		if !close(got, c.alpha, 2e-3, 0) {
			t.Errorf("chi2 sf(%v; %v) = %.5f, NIST table α = %v", c.x, c.k, got, c.alpha)
		}
	}
	// NIST 1.3.6.7.1 tabulates the area from 0 to z.
	for _, c := range []struct{ z, area float64 }{{1.0, 0.34134}, {1.96, 0.47500}, {2.5, 0.49379}, {3.0, 0.49865}} {
		if got := distuv.UnitNormal.CDF(c.z) - 0.5; !close(got, c.area, 0, 6e-6) {
			t.Errorf("Φ(%v) - 1/2 = %.6f, NIST %v", c.z, got, c.area)
		}
	}
	ref := loadScipy(t)
	for _, c := range ref.Chi2SF {
		if got := (distuv.ChiSquared{K: c[1]}).Survival(c[0]); !close(got, c[2], 1e-9, 1e-300) {
			t.Errorf("chi2 sf(%v; %v) = %v, scipy %v", c[0], c[1], got, c[2])
		}
	}
	for _, c := range ref.NormCDF {
		if got := distuv.UnitNormal.CDF(c[0]); !close(got, c[1], 1e-12, 1e-15) {
			t.Errorf("Φ(%v) = %v, scipy %v", c[0], got, c[1])
		}
	}
}

// TestKSCrowdedPulls: pulls crowded into a few cells (chains that agree to
// rounding) must not make the ordering quadratic, and D is then close to
// 1/2 (all values near the median).
func TestKSCrowdedPulls(t *testing.T) {
	x := make([]float64, 200000)
	for i := range x {
		x[i] = 1e-6 * float64(i%1000-500)
	}
	if d := KSStatistic(x); math.Abs(d-0.5) > 1e-3 {
		t.Errorf("D = %v, want about 0.5", d)
	}
}

// BenchmarkKSPValue times the p-value at a typical λ = √n·D = 0.87 of
// agreeing tables: the exact matrix method at n = 1000, the Pelz–Good
// expansion above.
func BenchmarkKSPValue(b *testing.B) {
	for _, n := range []int{1000, 10000, 100000} {
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			d := 0.87 / math.Sqrt(float64(n))
			for b.Loop() {
				KSPValue(n, d)
			}
		})
	}
}
