package stats

import (
	"math"
	"testing"
)

// TestMcNemarScipy: McNemar's exact p-value is scipy.stats.binomtest(n1,
// n1+n2, 0.5) (testdata/reference/counts_reference.json).
func TestMcNemarScipy(t *testing.T) {
	ref := loadCounts(t)
	for _, c := range ref.McNemar {
		n1, n2, want := int64(c[0]), int64(c[1]), c[2]
		if got := McNemar(n1, n2); !close(got, want, 1e-9, 1e-300) {
			t.Errorf("McNemar(%d, %d) = %.15g, scipy %s = %.15g", n1, n2, got, ref.SciPy, want)
		}
	}
}

// TestMcNemarPublished: the airway hyper-responsiveness example of
// M. W. Fagerland, S. Lydersen and P. Laake, "The McNemar test for binary
// matched-pairs data", BMC Med. Res. Methodol. 13 (2013) 91: 1 and 7
// discordant pairs, exact conditional p-value 0.070 (the table value, from
// memory; it is 2·9/256 = 0.0703).
func TestMcNemarPublished(t *testing.T) {
	if got := McNemar(1, 7); math.Abs(got-0.070) > 5e-4 {
		t.Errorf("McNemar(1, 7) = %.4g, published 0.070", got)
	}
	if got, want := McNemar(7, 1), McNemar(1, 7); got != want {
		t.Errorf("McNemar is not symmetric: %v and %v", got, want)
	}
	if got := McNemar(0, 0); got != 1 {
		t.Errorf("McNemar(0, 0) = %v, want 1 (no discordant event)", got)
	}
}
