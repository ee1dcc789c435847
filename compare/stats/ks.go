// Package stats holds the distribution functions tandem's comparison needs
// that gonum does not provide: the exact finite-n Kolmogorov–Smirnov
// distribution and the exact Wald–Wolfowitz runs distribution, and the
// exact tests of count data: the two-sided binomial test ([BinomTest]),
// McNemar's exact test ([McNemar]) and the randomized probability integral
// transform with its uniformity test ([RandomizedPIT], [KSUniform]); the
// Clopper–Pearson interval of a proportion ([ClopperPearson]); and Holm's
// adjustment of a family of p-values ([Holm]), the one every family in
// tandem uses. The χ², normal, beta and binomial distributions come from
// gonum (stat/distuv, mathext).
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
// distribution by the matrix method; above it the Pelz–Good expansion is
// used, whose difference from the exact value is below 1e-7 from here on
// (measured: 6.4e-8 at n = 1000, falling as 1/n²; see TestPelzGoodExact).
const KSExactLimit = 1000

// KSPValue returns P(D_n >= d) for the two-sided one-sample
// Kolmogorov–Smirnov statistic of n observations from a continuous
// distribution, to within 1e-6 absolute everywhere (checked against
// scipy.stats.kstwo up to n = 10⁶), following the choice of methods of
// R. Simard and P. L'Ecuyer, "Computing the two-sided Kolmogorov–Smirnov
// distribution", J. Stat. Softw. 39(11), 2011:
//
//   - t = n·d <= 1 or t >= n - 1: the exact closed forms of Ruben and
//     Gambino (1982), P(D_n < d) = n!/nⁿ (2t - 1)ⁿ for 1/2 < t <= 1 and
//     P(D_n >= d) = 2(1 - d)ⁿ for t >= n - 1;
//   - n <= KSExactLimit: 1 - K(n, d) with K by the matrix method of
//     Durbin (1973) as evaluated by Marsaglia, Tsang and Wang, "Evaluating
//     Kolmogorov's distribution", J. Stat. Softw. 8(18), 2003, including
//     their upper-tail shortcut for n·d² > 7.24 (or > 3.76 when n > 99);
//   - larger n: 1 - the Pelz–Good (1976) expansion
//     K0(z) + K1(z)/√n + K2(z)/n + K3(z)/n^(3/2), z = √n·d, whose error is
//     O(1/n²) in absolute terms; for n·d² >= 18 (p < 1e-15) the first
//     term of the limiting tail, 2 exp(-2 n d²). Simard and L'Ecuyer use
//     the one-sided Smirnov tail for n·d² >= 2.2 to keep the relative
//     precision of tiny p-values; an absolute 1e-6 does not need it, and
//     it costs O(n).
func KSPValue(n int, d float64) float64 {
	switch {
	case n <= 0 || math.IsNaN(d):
		return math.NaN()
	case d <= 0:
		return 1
	case d >= 1:
		return 0
	}
	nf := float64(n)
	t := nf * d
	switch {
	case t <= 0.5:
		return 1
	case t <= 1:
		lg, _ := math.Lgamma(nf + 1)
		return clamp01(-math.Expm1(lg - nf*math.Log(nf) + nf*math.Log(2*t-1)))
	case t >= nf-1:
		return clamp01(2 * math.Pow(1-d, nf))
	}
	if n <= KSExactLimit {
		return clamp01(1 - mtwCDF(n, d))
	}
	if s := t * d; s >= 18 {
		// below 2e-15: the first term of the limiting tail
		return 2 * math.Exp(-2*s)
	}
	return clamp01(1 - pelzGood(nf, d))
}

func clamp01(p float64) float64 { return math.Min(1, math.Max(0, p)) }

// pelzGood is the Pelz–Good expansion of P(D_n <= d) (W. Pelz and
// I. J. Good, J. R. Stat. Soc. B 38, 1976), in the form Simard and
// L'Ecuyer (2011) give, with z = √n·d, u_k = π²(k - ½)²/(2z²) and
// v_k = π²k²/(2z²):
//
//	K0 = √(2π)/z Σ e^(-u_k)
//	K1 = √(2π)/(6z⁴) Σ (π²(k-½)² - z²) e^(-u_k)
//	K2 = √(2π)/(72z⁷) Σ (6z⁶ + 2z⁴ + π²(2z⁴ - 5z²)(k-½)² + π⁴(1 - 2z²)(k-½)⁴) e^(-u_k)
//	     - √(2π) π²/(36z³) Σ k² e^(-v_k)
//	K3 = √(2π)/(6480z¹⁰) Σ (π⁶(5 - 30z²)(k-½)⁶ + π⁴(212z⁴ - 60z²)(k-½)⁴
//	     + π²(135z⁴ - 96z⁶)(k-½)² - 30z⁶ - 90z⁸) e^(-u_k)
//	     + √(2π) π²/(216z⁶) Σ (3z² - π²k²) k² e^(-v_k)
//
//	P ≈ K0 + K1/√n + K2/n + K3/n^(3/2)
func pelzGood(n, d float64) float64 {
	z := math.Sqrt(n) * d
	if z < 0.05 {
		return 0
	}
	z2 := z * z
	z4, z6 := z2*z2, z2*z2*z2
	const pi2 = math.Pi * math.Pi
	pi4, pi6 := pi2*pi2, pi2*pi2*pi2
	var s0, s1, s2, s3, e2, e3 float64
	for k := 1; k < 1000; k++ {
		h := float64(k) - 0.5
		h2 := h * h
		eu := math.Exp(-pi2 * h2 / (2 * z2))
		kf := float64(k)
		ev := math.Exp(-pi2 * kf * kf / (2 * z2))
		s0 += eu
		s1 += (pi2*h2 - z2) * eu
		s2 += (6*z6 + 2*z4 + pi2*(2*z4-5*z2)*h2 + pi4*(1-2*z2)*h2*h2) * eu
		s3 += (pi6*(5-30*z2)*h2*h2*h2 + pi4*(212*z4-60*z2)*h2*h2 + pi2*(135*z4-96*z6)*h2 - 30*z6 - 90*z6*z2) * eu
		e2 += kf * kf * ev
		e3 += (3*z2 - pi2*kf*kf) * kf * kf * ev
		if pi2*h2/(2*z2) > 50 && k > 2 {
			break
		}
	}
	r := math.Sqrt(2 * math.Pi)
	k0 := r / z * s0
	k1 := r / (6 * z4) * s1
	k2 := r/(72*z6*z)*s2 - r*pi2/(36*z2*z)*e2
	k3 := r/(6480*z6*z4)*s3 + r*pi2/(216*z6)*e3
	sn := math.Sqrt(n)
	return k0 + k1/sn + k2/n + k3/(n*sn)
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
