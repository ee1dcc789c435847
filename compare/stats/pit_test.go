package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestKSUniformScipy holds KSUniform to scipy.stats.kstest(u, "uniform",
// method="exact") (testdata/reference/counts_reference.json).
func TestKSUniformScipy(t *testing.T) {
	ref := loadCounts(t)
	for _, c := range ref.KSUniform {
		d, p := KSUniform(c.U)
		// KSPValue is within 1e-6 absolute of scipy (see TestKSLargeAgainstScipy)
		if !close(d, c.D, 1e-12, 0) || !close(p, c.P, 1e-4, 1e-6) {
			t.Errorf("n = %d: KSUniform = (%.10g, %.10g), scipy %s = (%.10g, %.10g)", len(c.U), d, p, ref.SciPy, c.D, c.P)
		}
	}
}

// TestRandomizedPITUniform: under the null the randomized PIT is exactly
// uniform (Czado, Gneiting and Held 2009, section 2.1). Its exact
// distribution is checked at a grid of points u: P(PIT <= u) = u, summing
// over k the binomial weight times the length of [F(k-1), F(k)] below u.
func TestRandomizedPITUniform(t *testing.T) {
	for _, n := range []int64{0, 1, 3, 10} {
		for _, p0 := range []float64{0.5, 0.3} {
			for _, u := range []float64{0.01, 0.2, 0.5, 0.77, 0.99} {
				got := 0.0
				for k := int64(0); k <= n; k++ {
					lo := RandomizedPIT(k, n, p0, 0)
					hi := RandomizedPIT(k, n, p0, 1)
					if hi > lo {
						got += (hi - lo) * math.Min(1, math.Max(0, (u-lo)/(hi-lo)))
					}
				}
				if math.Abs(got-u) > 1e-12 {
					t.Errorf("n = %d, p0 = %v: P(PIT <= %v) = %.15g", n, p0, u, got)
				}
			}
		}
	}
}

// TestPITCalibration: with fixed seeds, the KS test of the randomized PIT
// of binomial draws rejects at α = 0.05 at most at its rate within the
// binomial error.
func TestPITCalibration(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	trials, fails := 2000, 0
	for range trials {
		u := make([]float64, 30)
		for i := range u {
			n := int64(rng.IntN(4))
			k := int64(0)
			for range n {
				if rng.Float64() < 0.5 {
					k++
				}
			}
			u[i] = RandomizedPIT(k, n, 0.5, rng.Float64())
		}
		if _, p := KSUniform(u); p <= 0.05 {
			fails++
		}
	}
	// 0.05·2000 = 100 expected, binomial sd 9.7: 130 is 3σ above
	if fails > 130 {
		t.Errorf("%d of %d uniformity tests rejected at 0.05", fails, trials)
	}
	t.Logf("%d of %d rejected at 0.05", fails, trials)
}
