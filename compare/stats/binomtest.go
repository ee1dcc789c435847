package stats

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/stat/distuv"
)

// binomRelTol is the relative tolerance with which a probability counts as
// "no larger than the observed one" in [BinomTest]: the value scipy uses
// (rerr = 1 + 1e-7 in scipy.stats.binomtest), so that outcomes whose
// probabilities differ only by rounding are treated alike.
const binomRelTol = 1e-7

// BinomTest returns the exact two-sided p-value of the binomial test of k
// successes in n trials with success probability p0. The two-sided p-value
// is the probability of every outcome no more probable than the observed
// one,
//
//	p = Σ_{x : f(x) <= f(k)·(1 + 1e-7)} f(x),   f(x) = C(n, x) p0^x (1-p0)^(n-x)
//
// capped at 1: the definition of scipy.stats.binomtest (method of
// "minimum likelihood", Hollander and Wolfe's two-sided rule), including its
// relative tolerance. The observed side's tail is the binomial CDF (or
// survival function); the other side's tail starts where the pmf, which is
// monotone away from the mode, first drops to f(k)·(1 + 1e-7), found by
// bisection. k = n·p0 gives 1, and so does n = 0.
//
// It panics (a caller bug) unless 0 <= k <= n and 0 < p0 < 1.
func BinomTest(k, n int64, p0 float64) float64 {
	if k < 0 || k > n || !(p0 > 0 && p0 < 1) {
		panic("stats: BinomTest needs 0 <= k <= n and 0 < p0 < 1")
	}
	if n == 0 {
		return 1
	}
	b := distuv.Binomial{N: float64(n), P: p0}
	mean := float64(n) * p0
	fk := b.Prob(float64(k))
	if float64(k) == mean {
		return 1
	}
	lim := fk * (1 + binomRelTol)
	var p float64
	if float64(k) < mean {
		// upper side: the first x >= ceil(mean) with f(x) <= lim; the pmf
		// decreases from the mode up to n
		lo := int64(math.Ceil(mean))
		i := sort.Search(int(n-lo+1), func(j int) bool { return b.Prob(float64(lo+int64(j))) <= lim })
		x := lo + int64(i)
		p = b.CDF(float64(k))
		if x <= n {
			p += upperTail(b, x)
		}
	} else {
		// lower side: the last x <= floor(mean) with f(x) <= lim; the pmf
		// increases from 0 up to the mode
		hi := int64(math.Floor(mean))
		i := sort.Search(int(hi+1), func(j int) bool { return b.Prob(float64(j)) > lim })
		x := int64(i) - 1 // last x with f(x) <= lim, or -1
		p = upperTail(b, k)
		if x >= 0 {
			p += b.CDF(float64(x))
		}
	}
	return math.Min(1, p)
}

// upperTail is P(X >= x) = I_p(x, n-x+1), the regularized incomplete
// beta function (distuv's Survival is 1 - CDF, which loses small tails).
func upperTail(b distuv.Binomial, x int64) float64 {
	if x <= 0 {
		return 1
	}
	if float64(x) > b.N {
		return 0
	}
	return mathext.RegIncBeta(float64(x), b.N-float64(x)+1, b.P)
}
