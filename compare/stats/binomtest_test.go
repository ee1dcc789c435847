package stats

import (
	"math"
	"testing"
)

// TestBinomTestScipy holds BinomTest to scipy.stats.binomtest's two-sided
// p-value on a grid of n, k and p0 (testdata/reference/counts_reference.json).
func TestBinomTestScipy(t *testing.T) {
	ref := loadCounts(t)
	for _, c := range ref.BinomTest {
		k, n, p0, want := int64(c[0]), int64(c[1]), c[2], c[3]
		got := BinomTest(k, n, p0)
		if !close(got, want, 1e-9, 1e-300) {
			t.Errorf("BinomTest(%d, %d, %v) = %.15g, scipy %s binomtest = %.15g", k, n, p0, got, ref.SciPy, want)
		}
	}
}

// TestBinomTestPublished checks worked examples.
func TestBinomTestPublished(t *testing.T) {
	cases := []struct {
		k, n   int64
		p0     float64
		want   float64
		tol    float64
		source string
	}{
		// W. J. Conover, Practical Nonparametric Statistics (1971), p. 97:
		// 682 "giant" plants among 925 progeny against the Mendelian 3/4.
		// The p-value 0.3825 is the one printed by R's binom.test example
		// for these data (quoted from memory of R's documentation).
		{682, 925, 0.75, 0.3825, 5e-5, "Conover 1971 via R binom.test"},
		// A fact of the trade: with p0 = ½ the two-sided p-value doubles
		// the smaller tail: 1 success in 8 gives 2·9/256.
		{1, 8, 0.5, 18.0 / 256, 1e-15, "2·P(X <= 1), n = 8"},
		// k at the mean: nothing is less likely than what was seen... and
		// everything is at least as extreme: p = 1.
		{5, 10, 0.5, 1, 0, "k = n·p0"},
		// 0 of 10 at p0 = ½: only 0 and 10 are as unlikely: 2/1024.
		{0, 10, 0.5, 2.0 / 1024, 1e-15, "2·(½)^10"},
	}
	for _, c := range cases {
		if got := BinomTest(c.k, c.n, c.p0); math.Abs(got-c.want) > c.tol {
			t.Errorf("%s: BinomTest(%d, %d, %v) = %.6g, want %.6g", c.source, c.k, c.n, c.p0, got, c.want)
		}
	}
}

// TestBinomTestValid checks, by exact enumeration, that the test never
// rejects more often than its level: P(p <= a) <= a for every a (a p-value
// of a discrete test is super-uniform).
func TestBinomTestValid(t *testing.T) {
	for _, n := range []int64{1, 4, 9, 30} {
		for _, p0 := range []float64{0.5, 0.2, 0.7} {
			pv := make([]float64, n+1)
			for k := range pv {
				pv[k] = BinomTest(int64(k), n, p0)
			}
			for _, a := range pv {
				mass := 0.0
				for k, p := range pv {
					if p <= a {
						mass += binomPMF(int64(k), n, p0)
					}
				}
				if mass > a*(1+1e-9) {
					t.Errorf("n = %d, p0 = %v: P(p <= %.6g) = %.6g", n, p0, a, mass)
				}
			}
		}
	}
}

func binomPMF(k, n int64, p float64) float64 {
	lg := func(x int64) float64 { v, _ := math.Lgamma(float64(x + 1)); return v }
	return math.Exp(lg(n) - lg(k) - lg(n-k) + float64(k)*math.Log(p) + float64(n-k)*math.Log1p(-p))
}

func TestBinomTestPanics(t *testing.T) {
	for _, c := range []struct {
		k, n int64
		p    float64
	}{{-1, 3, 0.5}, {4, 3, 0.5}, {1, 3, 0}, {1, 3, 1}, {1, 3, math.NaN()}} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("BinomTest(%d, %d, %v) did not panic", c.k, c.n, c.p)
				}
			}()
			BinomTest(c.k, c.n, c.p)
		}()
	}
}
