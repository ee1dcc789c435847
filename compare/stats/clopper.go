package stats

import "gonum.org/v1/gonum/stat/distuv"

// ClopperPearson returns the central ("exact") confidence interval of
// level cl for a binomial proportion with k successes in n trials
// (C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial
// limits illustrated in the case of the binomial", Biometrika 26 (1934)
// 404–413). With α = 1 − cl and B⁻¹(q; a, b) the q-quantile of the Beta(a, b)
// distribution,
//
//	lo = B⁻¹(α/2; k, n−k+1),  hi = B⁻¹(1−α/2; k+1, n−k)
//
// with lo = 0 when k = 0 and hi = 1 when k = n: the interval of
// scipy.stats.binomtest(k, n).proportion_ci(cl, method='exact'). No trial
// (n <= 0) gives [0, 1].
//
// It panics (a caller bug) unless 0 <= k <= n when n > 0, and 0 < cl < 1.
func ClopperPearson(k, n int64, cl float64) (lo, hi float64) {
	if !(cl > 0 && cl < 1) {
		panic("stats: ClopperPearson needs 0 < cl < 1")
	}
	if n <= 0 {
		return 0, 1
	}
	if k < 0 || k > n {
		panic("stats: ClopperPearson needs 0 <= k <= n")
	}
	a := 1 - cl
	lo, hi = 0, 1
	if k > 0 {
		lo = distuv.Beta{Alpha: float64(k), Beta: float64(n - k + 1)}.Quantile(a / 2)
	}
	if k < n {
		hi = distuv.Beta{Alpha: float64(k + 1), Beta: float64(n - k)}.Quantile(1 - a/2)
	}
	return lo, hi
}
