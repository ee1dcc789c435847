package stats

import (
	"encoding/json"
	"os"
	"testing"
)

// countsValues is testdata/reference/counts_reference.json, written by
// testdata/reference/counts_make_reference.py with Debian's python3-scipy
// (the versions are recorded in the file).
type countsValues struct {
	SciPy     string       `json:"scipy"`
	BinomTest [][4]float64 `json:"binomtest"`
	McNemar   [][3]float64 `json:"mcnemar"`
	KSUniform []struct {
		U    []float64 `json:"u"`
		D, P float64
	} `json:"ks_uniform"`
}

func loadCounts(t *testing.T) countsValues {
	t.Helper()
	data, err := os.ReadFile("../../testdata/reference/counts_reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var v countsValues
	if err := json.Unmarshal(data, &v); err != nil {
		t.Fatal(err)
	}
	if len(v.BinomTest) == 0 || len(v.McNemar) == 0 || len(v.KSUniform) == 0 {
		t.Fatal("counts reference file has no values")
	}
	return v
}

// TestCountsFixtureFresh reruns the reference script with Debian's
// python3-scipy, when present, and checks that the committed values are
// what scipy computes today.
func TestCountsFixtureFresh(t *testing.T) {
	checkFixtureFresh(t, []string{"scipy", "numpy"}, "counts_make_reference.py", "counts_reference.json",
		[]string{"binomtest", "mcnemar", "ks_uniform", "weighted"})
}
