package campaign

import (
	"strings"
	"testing"

	"tandem/compare/fuzzseed"
)

// TestProtocolDigestForm: comments, line ends, key order, quoting and the
// text of numbers do not change the digest; a value does.
func TestProtocolDigestForm(t *testing.T) {
	base := "format = \"tandem/v2\"\nalpha = 0.05\n[a]\nx = 1000.0\ny = 'q'\n"
	same := []string{
		"# a comment\n" + base,
		strings.ReplaceAll(base, "\n", "\r\n"),
		"alpha = 5e-2   # trailing comment\nformat = 'tandem/v2'\n[a]\ny = \"q\"\nx = 1e3\n",
	}
	want, err := ProtocolDigest([]byte(base))
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range same {
		if got, err := ProtocolDigest([]byte(s)); err != nil || got != want {
			t.Errorf("%q: digest %s (%v), want %s", s, got, err, want)
		}
	}
	for _, s := range []string{
		strings.Replace(base, "0.05", "0.01", 1),
		strings.Replace(base, "1000.0", "1000", 1), // a float and an integer differ
		strings.Replace(base, "'q'", "'Q'", 1),
	} {
		if got, _ := ProtocolDigest([]byte(s)); got == want {
			t.Errorf("%q: a change of meaning kept the digest", s)
		}
	}
}

// FuzzProtocolDigest: never panics, and a protocol with CRLF line ends
// (as a checkout with core.autocrlf makes it) has the digest of the
// protocol with LF line ends.
func FuzzProtocolDigest(f *testing.F) {
	for _, s := range fuzzseed.Load(f, "protocol-*.toml") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		d, err := ProtocolDigest(data)
		if err != nil || strings.Contains(string(data), "\r") {
			return
		}
		crlf := strings.ReplaceAll(string(data), "\n", "\r\n")
		if d2, err := ProtocolDigest([]byte(crlf)); err == nil && d2 != d {
			t.Fatalf("CRLF line ends changed the digest")
		}
	})
}
