package stats

import (
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"strings"
	"testing"
)

// TestScipyFixtureFresh reruns testdata/reference/make_scipy_reference.py
// with Debian's python3-scipy, when present, and checks that the committed
// reference values are what scipy computes today.
func TestScipyFixtureFresh(t *testing.T) {
	checkFixtureFresh(t, []string{"scipy", "pandas"}, "make_scipy_reference.py", "scipy_values.json",
		[]string{"chi2_sf", "norm_cdf", "kstwo_sf", "kstwo_sf_large", "kstwo_sf_dmtw", "runs_cdf", "comparisons"})
}

// checkFixtureFresh runs the script testdata/reference/script with Debian's
// /usr/bin/python3 (skipping when one of the Python modules is missing,
// failing instead under TANDEM_REQUIRE_TOOLS) and checks that the values
// under keys in what it prints agree to 1e-9 with the committed
// testdata/reference/fixture.
func checkFixtureFresh(t *testing.T, modules []string, script, fixture string, keys []string) {
	t.Helper()
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import "+strings.Join(modules, ", ")).Run(); err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatalf("python3 with %s is required in CI but not installed", strings.Join(modules, " and "))
		}
		t.Skipf("skipping: Debian's python3 with %s is not installed", strings.Join(modules, " and "))
	}
	cmd := exec.Command(py, "testdata/reference/"+script)
	cmd.Dir = "../.."
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference script %s: %v", script, err)
	}
	committed, err := os.ReadFile("../../testdata/reference/" + fixture)
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
	for _, key := range keys {
		if !numbersClose(fresh[key], old[key]) {
			t.Errorf("%s: scipy %v now computes different values than the committed fixture %s (regenerate it and review)", key, fresh["scipy"], fixture)
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
