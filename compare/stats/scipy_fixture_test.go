package stats

import (
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"testing"
)

// TestScipyFixtureFresh reruns testdata/reference/make_scipy_reference.py
// with Debian's python3-scipy, when present, and checks that the committed
// reference values are what scipy computes today.
func TestScipyFixtureFresh(t *testing.T) {
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import scipy, pandas").Run(); err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("python3-scipy and python3-pandas are required in CI but not installed")
		}
		t.Skip("skipping: Debian's python3-scipy/python3-pandas are not installed")
	}
	cmd := exec.Command(py, "testdata/reference/make_scipy_reference.py")
	cmd.Dir = "../.."
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference script: %v", err)
	}
	committed, err := os.ReadFile("../../testdata/reference/scipy_values.json")
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
	for _, key := range []string{"chi2_sf", "norm_cdf", "kstwo_sf", "kstwo_sf_large", "kstwo_sf_dmtw", "runs_cdf", "comparisons"} {
		if !numbersClose(fresh[key], old[key]) {
			t.Errorf("%s: scipy %v now computes different values than the committed fixture (regenerate it and review)", key, fresh["scipy"])
		}
	}
}

func numbersClose(a, b any) bool {
	switch x := a.(type) {
	case float64:
		y, ok := b.(float64)
		return ok && math.Abs(x-y) <= 1e-9*math.Max(math.Abs(y), 1e-300)
	case []any:
		y, ok := b.([]any)
		if !ok || len(x) != len(y) {
			return false
		}
		for i := range x {
			if !numbersClose(x[i], y[i]) {
				return false
			}
		}
		return true
	case map[string]any:
		y, ok := b.(map[string]any)
		if !ok || len(x) != len(y) {
			return false
		}
		for k, v := range x {
			if !numbersClose(v, y[k]) {
				return false
			}
		}
		return true
	default:
		return a == b
	}
}
