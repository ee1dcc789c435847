package stats

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"
)

// RandomizedPIT returns the randomized probability integral transform of
// an outcome k of X ~ Binomial(n, p0), with v a uniform number in [0, 1):
//
//	u = F(k-1) + v·(F(k) - F(k-1)),   F the CDF of X
//
// When k is drawn from that binomial and v independently, u is exactly
// uniform on [0, 1], which makes the PIT of a discrete variable testable
// with the tests of continuous uniformity (C. Czado, T. Gneiting and
// L. Held, "Predictive model assessment for count data", Biometrics 65
// (2009) 1254, section 2.1; the randomized PIT goes back to Brockwell 2007).
func RandomizedPIT(k, n int64, p0, v float64) float64 {
	if k < 0 || k > n || !(p0 > 0 && p0 < 1) {
		panic("stats: RandomizedPIT needs 0 <= k <= n and 0 < p0 < 1")
	}
	b := distuv.Binomial{N: float64(n), P: p0}
	below, upto := 0.0, 1.0
	if k > 0 {
		below = b.CDF(float64(k - 1))
	}
	if k < n {
		upto = b.CDF(float64(k))
	}
	return below + v*(upto-below)
}

// KSUniform returns the two-sided one-sample Kolmogorov–Smirnov statistic
// of u against the uniform distribution on [0, 1],
//
//	D_n = max_i max( i/n - u_(i), u_(i) - (i-1)/n )
//
// and its exact p-value P(D_n >= D) from [KSPValue] (the null distribution
// of D_n is the same for every continuous distribution). u is not
// modified. An empty sample gives D = 0, p = 1.
func KSUniform(u []float64) (d, p float64) {
	n := len(u)
	if n == 0 {
		return 0, 1
	}
	s := slices.Clone(u)
	slices.Sort(s)
	fn := float64(n)
	for i, x := range s {
		d = math.Max(d, math.Max(float64(i+1)/fn-x, x-float64(i)/fn))
	}
	return d, KSPValue(n, d)
}
