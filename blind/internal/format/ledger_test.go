package format

import (
	"encoding/json"
	"strings"
	"testing"
)

// TestEntryLineIsJSON: a canonical ledger line is valid JSON (RFC 8259),
// read by Go's general-purpose decoder to the same values, including
// quotes, backslashes and non-ASCII text; other escapes and control
// characters are refused by the strict parser.
func TestEntryLineIsJSON(t *testing.T) {
	e := Entry{Seq: 12, Prev: Genesis, Step: "seal", Time: "2026-12-01T09:30:00Z", Actor: "heron",
		Files: map[string]string{"sealed/heron/x.v1.age": Genesis},
		Data:  map[string]string{"reason": `a "quoted" \ reason — ünïcode <&>`, "team": "heron"}, Sig: "AAAA"}
	line := e.Line()
	var generic map[string]any
	if err := json.Unmarshal(line, &generic); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, line)
	}
	if generic["data"].(map[string]any)["reason"] != e.Data["reason"] {
		t.Errorf("reason read back as %q", generic["data"].(map[string]any)["reason"])
	}
	// Characters next to the forbidden ranges are written as they are.
	for _, ok := range []string{"\u00a0", "\u061b", "\u200d", "\u202f", "\u2065", "\u206a", "\U0001d11e"} {
		e2 := e
		e2.Data = map[string]string{"reason": "a" + ok + "b"}
		if _, err := DecodeEntry(e2.Line()); err != nil {
			t.Errorf("refused %+q: %v", ok, err)
		}
	}
	back, err := DecodeEntry(line)
	if err != nil || back.Data["reason"] != e.Data["reason"] || back.Seq != 12 || back.Sig != "AAAA" {
		t.Fatalf("round trip: %v %+v", err, back)
	}
	for _, bad := range []string{
		strings.Replace(string(line), `a \"quoted\"`, `a \u0022quoted\"`, 1),
		strings.Replace(string(line), `"seq":12`, `"seq":012`, 1),
		strings.Replace(string(line), `"seq":12`, `"seq": 12`, 1),
		strings.Replace(string(line), "ünïcode", "\x01", 1),
		strings.Replace(string(line), `{"reason"`, `{"team":"heron","reason"`, 1),
		string(line) + " ",
		// SPEC.md section 8, jchar: no C1 control (U+0085 NEXT LINE is
		// C2 85 in UTF-8), separator or bidirectional formatting character.
		strings.Replace(string(line), "ünïcode", "\u0085", 1),
		strings.Replace(string(line), "ünïcode", "\u009f", 1),
		strings.Replace(string(line), "ünïcode", "\u2028", 1),
		strings.Replace(string(line), "ünïcode", "\u2029", 1),
		strings.Replace(string(line), "ünïcode", "\u202e", 1),
		strings.Replace(string(line), "ünïcode", "\u2066", 1),
		strings.Replace(string(line), "ünïcode", "\u061c", 1),
		strings.Replace(string(line), "ünïcode", "\u200f", 1),
		strings.Replace(string(line), "ünïcode", "\xc2", 1),         // a truncated sequence
		strings.Replace(string(line), "ünïcode", "\xed\xa0\x80", 1), // a surrogate
		strings.Replace(string(line), `"time":"2026-12-01T09:30:00Z"`, `"time":"2026-12-01T09:30:00.5Z"`, 1),
		strings.Replace(string(line), `"time":"2026-12-01T09:30:00Z"`, `"time":"2026-13-01T09:30:00Z"`, 1),
	} {
		if _, err := DecodeEntry([]byte(bad)); err == nil {
			t.Errorf("accepted %s", bad)
		}
	}
}
