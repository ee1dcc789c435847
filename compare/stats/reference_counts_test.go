package stats

import (
	"encoding/json"
	"os"
	"os/exec"
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
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import scipy, numpy").Run(); err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("python3-scipy is required in CI but not installed")
		}
		t.Skip("skipping: Debian's python3-scipy is not installed")
	}
	cmd := exec.Command(py, "testdata/reference/counts_make_reference.py")
	cmd.Dir = "../.."
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference script: %v", err)
	}
	committed, err := os.ReadFile("../../testdata/reference/counts_reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var fresh, old map[string]any
	if err := json.Unmarshal(out, &fresh); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(committed, &old); err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{"binomtest", "mcnemar", "ks_uniform", "weighted"} {
		if !numbersClose(fresh[key], old[key]) {
			t.Errorf("%s: scipy %v now computes different values than the committed fixture (regenerate it and review)", key, fresh["scipy"])
		}
	}
}
