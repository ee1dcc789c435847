package format

import (
	"os"
	"strings"
	"testing"
)

// TestCountsFileRefusals: every non-canonical or malformed variant of a
// valid file is refused with a position.
func TestCountsFileRefusals(t *testing.T) {
	data, err := os.ReadFile("testdata/seeds/events.counts")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := DecodeCountsFile("events.counts", data); err != nil {
		t.Fatalf("the seed is refused: %v", err)
	}
	s := string(data)
	for name, bad := range map[string]string{
		"no final LF":      strings.TrimSuffix(s, "\n"),
		"CRLF":             strings.ReplaceAll(s, "\n", "\r\n"),
		"number 1.0":       strings.Replace(s, "p0: 0.5", "p0: 0.50", 1),
		"NaN as text":      strings.Replace(s, "g: 3.47", "g: NaN", 1),
		"leading zero":     strings.Replace(s, "seed: 2026", "seed: 02026", 1),
		"min-bin too big":  strings.Replace(s, "min-bin: 1", "min-bin: 9", 1),
		"missing line":     strings.Replace(s, "pit-d: 0.241\n", "", 1),
		"bad test name":    strings.Replace(s, "bin: binomial 1", "bin: bi/nomial 1", 1),
		"other header":     strings.Replace(s, "count tests", "count test", 1),
		"bad seal":         strings.Replace(s, "# seal: team-a 1 ", "# seal: team-a 01 ", 1),
		"two spaces":       strings.Replace(s, "runs: 5 3 2", "runs: 5  3 2", 1),
		"negative samples": strings.Replace(s, "samples: 1000", "samples: -1000", 1),
	} {
		if bad == s {
			t.Fatalf("%s: the edit did not apply", name)
		}
		if _, err := DecodeCountsFile("x.txt", []byte(bad)); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
}
