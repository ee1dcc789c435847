package stats

import (
	"math"
	"testing"
)

// TestClopperPearsonScipy: intervals from Debian's python3-scipy 1.10.1,
//
//	scipy.stats.binomtest(k, n).proportion_ci(confidence_level=cl, method='exact')
//
// (run with /usr/bin/python3; the values are pasted as printed by repr).
func TestClopperPearsonScipy(t *testing.T) {
	for _, c := range []struct {
		k, n   int64
		cl     float64
		lo, hi float64
	}{
		{0, 10, 0.95, 0.0, 0.30849710781876294},
		{10, 10, 0.95, 0.6915028921812371, 1.0},
		{3, 10, 0.95, 0.06673951117773447, 0.652452850060008},
		{1, 1, 0.6827, 0.15865, 1.0},
		{50, 100, 0.6827, 0.4452998514766078, 0.5547001485233923},
		{7, 1000, 0.99, 0.002041386571444228, 0.0170469318350892},
		{999, 1000, 0.9, 0.9952650064245071, 0.9999487080210909},
		{0, 1, 0.5, 0.0, 0.75},
		{12345, 20000, 0.6827, 0.6137821545813821, 0.6207060351456903},
	} {
		lo, hi := ClopperPearson(c.k, c.n, c.cl)
		if !close(lo, c.lo, 1e-9, 1e-15) || !close(hi, c.hi, 1e-9, 1e-15) {
			t.Errorf("ClopperPearson(%d, %d, %v) = [%.16g, %.16g], scipy [%.16g, %.16g]", c.k, c.n, c.cl, lo, hi, c.lo, c.hi)
		}
	}
}

// TestClopperPearsonClosedForm: at k = 0 the upper limit solves
// (1 − p)^n = α/2, and at k = n the lower limit solves p^n = α/2 (Clopper
// and Pearson 1934, Biometrika 26:404, the defining tail equations with one
// term left). Also the trivial cases and the symmetry k ↔ n − k.
func TestClopperPearsonClosedForm(t *testing.T) {
	for _, n := range []int64{1, 2, 5, 30, 1000} {
		for _, cl := range []float64{0.6827, 0.9, 0.95, 0.99} {
			a := 1 - cl
			lo, hi := ClopperPearson(0, n, cl)
			if want := 1 - math.Pow(a/2, 1/float64(n)); lo != 0 || !close(hi, want, 1e-10, 0) {
				t.Errorf("ClopperPearson(0, %d, %v) = [%v, %v], want [0, %v]", n, cl, lo, hi, want)
			}
			lo, hi = ClopperPearson(n, n, cl)
			if want := math.Pow(a/2, 1/float64(n)); hi != 1 || !close(lo, want, 1e-10, 0) {
				t.Errorf("ClopperPearson(%d, %d, %v) = [%v, %v], want [%v, 1]", n, n, cl, lo, hi, want)
			}
			for k := int64(0); k <= n; k += 1 + n/7 {
				lo, hi := ClopperPearson(k, n, cl)
				mlo, mhi := ClopperPearson(n-k, n, cl)
				if !close(lo, 1-mhi, 1e-9, 1e-12) || !close(hi, 1-mlo, 1e-9, 1e-12) {
					t.Errorf("n = %d, k = %d, cl = %v: [%v, %v] is not the mirror of [%v, %v]", n, k, cl, lo, hi, mlo, mhi)
				}
				if p := float64(k) / float64(n); !(lo <= p && p <= hi) {
					t.Errorf("n = %d, k = %d: [%v, %v] does not hold k/n", n, k, lo, hi)
				}
			}
		}
	}
	if lo, hi := ClopperPearson(0, 0, 0.95); lo != 0 || hi != 1 {
		t.Errorf("no trial: [%v, %v], want [0, 1]", lo, hi)
	}
}
