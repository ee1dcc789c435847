package stats

import "math"

// Runs counts the runs in the signs of d, dropping zeros: it returns the
// number of positive values n1, of negative values n2, and of runs r (maximal
// blocks of equal sign).
func Runs(d []float64) (n1, n2, r int) {
	prev := 0
	for _, v := range d {
		s := 0
		switch {
		case v > 0:
			s = 1
			n1++
		case v < 0:
			s = -1
			n2++
		default:
			continue
		}
		if s != prev {
			r++
			prev = s
		}
	}
	return n1, n2, r
}

// RunsPValue returns the exact one-sided probability P(R <= r) of the
// Wald–Wolfowitz runs test: the chance of r or fewer runs among n1 items of
// one kind and n2 of the other in random order. Too few runs is what a
// coherent trend produces. With N = n1 + n2 and k >= 1,
//
//	P(R = 2k)   = 2 C(n1-1, k-1) C(n2-1, k-1) / C(N, n1)
//	P(R = 2k+1) = [C(n1-1, k) C(n2-1, k-1) + C(n1-1, k-1) C(n2-1, k)] / C(N, n1)
//
// (Swed and Eisenhart, Ann. Math. Statist. 14, 1943). Terms are summed in
// log space, so any n1, n2 are fine. When either count is zero there is no
// test and the result is 1.
func RunsPValue(n1, n2, r int) float64 {
	if n1 <= 0 || n2 <= 0 {
		return 1
	}
	maxR := 2 * min(n1, n2)
	if n1 != n2 {
		maxR++
	}
	if r >= maxR {
		return 1
	}
	if r < 2 {
		return 0
	}
	logTotal := logChoose(n1+n2, n1)
	// The distribution of R is unimodal around its mean 2·n1·n2/N + 1. Sum
	// the tail that does not contain the mode, walking away from r, and
	// stop once terms no longer change the sum; complement if needed.
	mean := 2*float64(n1)*float64(n2)/float64(n1+n2) + 1
	tail := func(from, to, step int) float64 {
		p := 0.0
		for x := from; x != to+step; x += step {
			t := math.Exp(logRunsProb(n1, n2, x) - logTotal)
			p += t
			if (t < 1e-18*p || t == 0) && math.Abs(float64(x)-mean) > 2 {
				break
			}
		}
		return p
	}
	if float64(r) <= mean {
		return clamp01(tail(r, 2, -1))
	}
	return clamp01(1 - tail(r+1, maxR, 1))
}

// logRunsProb is log of the number of arrangements with exactly r runs.
func logRunsProb(n1, n2, r int) float64 {
	k := r / 2
	if r%2 == 0 {
		return math.Ln2 + logChoose(n1-1, k-1) + logChoose(n2-1, k-1)
	}
	a := logChoose(n1-1, k) + logChoose(n2-1, k-1)
	b := logChoose(n1-1, k-1) + logChoose(n2-1, k)
	return logAdd(a, b)
}

func logAdd(a, b float64) float64 {
	if math.IsInf(a, -1) {
		return b
	}
	if math.IsInf(b, -1) {
		return a
	}
	if a < b {
		a, b = b, a
	}
	return a + math.Log1p(math.Exp(b-a))
}

// logChoose is log C(n, k), or -Inf when the coefficient is zero.
func logChoose(n, k int) float64 {
	if k < 0 || k > n || n < 0 {
		return math.Inf(-1)
	}
	a, _ := math.Lgamma(float64(n + 1))
	b, _ := math.Lgamma(float64(k + 1))
	c, _ := math.Lgamma(float64(n - k + 1))
	return a - b - c
}
