// Package stats holds the distribution functions tandem's comparison needs
// that gonum does not provide: the exact finite-n Kolmogorov–Smirnov
// distribution and the exact Wald–Wolfowitz runs distribution. The χ² and
// normal distributions come from gonum (stat/distuv, mathext).
package stats

import (
	"math"
	"runtime"
	"slices"
	"sync"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// KSStatistic returns the two-sided one-sample Kolmogorov–Smirnov statistic
// of x against the unit normal distribution:
//
//	D_n = max_i max( i/n - Φ(x_(i)), Φ(x_(i)) - (i-1)/n )
//
// with x_(i) the sorted sample. x is not modified. The sample is ordered by
// a bucket sort of u = Φ(x) into n equal cells of [0, 1] (each cell then
// holds about one value), so the cost is linear in n.
func KSStatistic(x []float64) float64 {
	n := len(x)
	if n == 0 {
		return 0
	}
	u := normalCDFs(x)
	start := make([]int32, n+1)
	for _, v := range u {
		start[cell(v, n)+1]++
	}
	for k := 1; k <= n; k++ {
		start[k] += start[k-1]
	}
	sorted := make([]float64, n)
	for _, v := range u {
		c := cell(v, n)
		sorted[start[c]] = v
		start[c]++
	}
	// start[c] has moved to the end of cell c; order each cell (usually
	// one value; many when the pulls crowd together, hence a real sort).
	lo := int32(0)
	for c := 0; c < n; c++ {
		if hi := start[c]; hi-lo > 1 {
			slices.Sort(sorted[lo:hi])
			lo = hi
		} else {
			lo = hi
		}
	}
	nf := float64(n)
	d := 0.0
	for i, f := range sorted {
		// plain comparisons: math.Max's NaN handling is slow here, and
		// every value is a probability
		if v := float64(i+1)/nf - f; v > d {
			d = v
		}
		if v := f - float64(i)/nf; v > d {
			d = v
		}
	}
	return d
}

// normalCDFs returns Φ(x_i) for every x_i, spreading large samples over
// the available cores.
func normalCDFs(x []float64) []float64 {
	u := make([]float64, len(x))
	parts := runtime.GOMAXPROCS(0)
	if len(x) < 1<<16 || parts < 2 {
		parts = 1
	}
	var wg sync.WaitGroup
	chunk := (len(x) + parts - 1) / parts
	for lo := 0; lo < len(x); lo += chunk {
		hi := min(lo+chunk, len(x))
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := lo; i < hi; i++ {
				u[i] = distuv.UnitNormal.CDF(x[i])
			}
		}()
	}
	wg.Wait()
	return u
}

func cell(u float64, n int) int {
	c := int(u * float64(n))
	return min(max(c, 0), n-1)
}

// KSExactLimit is the largest n for which [KSPValue] evaluates the exact
// distribution; above it the Stephens-corrected asymptotic form is used.
const KSExactLimit = 10000

// KSPValue returns P(D_n >= d) for the two-sided one-sample
// Kolmogorov–Smirnov statistic of n observations from a continuous
// distribution.
//
// For n <= KSExactLimit it is 1 - K(n, d) with K the exact distribution
// computed by the matrix method of Marsaglia, Tsang and Wang, "Evaluating
// Kolmogorov's distribution", J. Stat. Softw. 8(18), 2003, including their
// upper-tail shortcut for n·d² > 7.24 (or > 3.76 when n > 99), which they
// give as accurate to about 5 digits where it applies. For larger n it uses
// the limiting Kolmogorov distribution with Stephens' correction
// (M. A. Stephens, J. R. Stat. Soc. B 32, 1970):
//
//	p = Q_KS((√n + 0.12 + 0.11/√n) d),  Q_KS(λ) = 2 Σ_{j≥1} (-1)^(j-1) exp(-2 j² λ²)
func KSPValue(n int, d float64) float64 {
	switch {
	case n <= 0 || math.IsNaN(d):
		return math.NaN()
	case d <= 0:
		return 1
	case d >= 1:
		return 0
	}
	if n > KSExactLimit {
		sn := math.Sqrt(float64(n))
		return kolmogorovQ((sn + 0.12 + 0.11/sn) * d)
	}
	return clamp01(1 - mtwCDF(n, d))
}

func clamp01(p float64) float64 { return math.Min(1, math.Max(0, p)) }

// kolmogorovQ is the upper tail of the limiting Kolmogorov distribution.
func kolmogorovQ(lambda float64) float64 {
	if lambda < 0.2 {
		return 1
	}
	sum := 0.0
	sign := 1.0
	for j := 1; j <= 100; j++ {
		term := sign * 2 * math.Exp(-2*float64(j*j)*lambda*lambda)
		sum += term
		if math.Abs(term) <= 1e-16*math.Abs(sum) {
			break
		}
		sign = -sign
	}
	return clamp01(sum)
}

// mtwCDF is K(n, d) = P(D_n < d) by the Marsaglia–Tsang–Wang method.
func mtwCDF(n int, d float64) float64 {
	nf := float64(n)
	s := d * d * nf
	if s > 7.24 || (s > 3.76 && n > 99) {
		return 1 - 2*math.Exp(-(2.000071+0.331/math.Sqrt(nf)+1.409/nf)*s)
	}
	k := int(nf*d) + 1
	m := 2*k - 1
	h := float64(k) - nf*d
	H := mat.NewDense(m, m, nil)
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			if i-j+1 >= 0 {
				H.Set(i, j, 1)
			}
		}
	}
	for i := 0; i < m; i++ {
		H.Set(i, 0, H.At(i, 0)-math.Pow(h, float64(i+1)))
		H.Set(m-1, i, H.At(m-1, i)-math.Pow(h, float64(m-i)))
	}
	if 2*h-1 > 0 {
		H.Set(m-1, 0, H.At(m-1, 0)+math.Pow(2*h-1, float64(m)))
	}
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			if i-j+1 > 0 {
				v := H.At(i, j)
				for g := 2; g <= i-j+1; g++ {
					v /= float64(g)
				}
				H.Set(i, j, v)
			}
		}
	}
	Q, eQ := matPow(H, 0, n, m)
	v := Q.At(k-1, k-1)
	for i := 1; i <= n; i++ {
		v = v * float64(i) / nf
		if v < 1e-140 {
			v *= 1e140
			eQ -= 140
		}
	}
	return v * math.Pow(10, float64(eQ))
}

// matPow raises A (carrying a decimal exponent eA) to the n-th power,
// rescaling by 1e-140 whenever the centre element grows past 1e140.
func matPow(A *mat.Dense, eA, n, m int) (*mat.Dense, int) {
	if n == 1 {
		return mat.DenseCopyOf(A), eA
	}
	V, eV := matPow(A, eA, n/2, m)
	B := mat.NewDense(m, m, nil)
	B.Mul(V, V)
	eB := 2 * eV
	if n%2 == 0 {
		V, eV = B, eB
	} else {
		C := mat.NewDense(m, m, nil)
		C.Mul(A, B)
		V, eV = C, eA+eB
	}
	if V.At(m/2, m/2) > 1e140 {
		V.Scale(1e-140, V)
		eV += 140
	}
	return V, eV
}
