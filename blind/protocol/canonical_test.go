package protocol

import (
	"bytes"
	"strings"
	"testing"

	"tandem/compare/fuzzseed"
)

// canonicalBase is a protocol in one writing; the variants below say the
// same thing in other writings.
func canonicalBase(t *testing.T) string {
	return base(t, goodObservable+`
[[observable]]
name = "zenith"
title = "Zenith angle"

  [[observable.column]]
  name = "events"
  errors = ["stat"]
  scale = [0.5, 2.0]
  shift = [-10.0, 10.0]
  correlations = { stat = 0.5 }
`)
}

// TestCanonicalIgnoresWriting: files that differ only in comments, CRLF
// line ends, key order, whitespace, string quoting, number spelling and
// inline versus standard tables encode to the same bytes; a changed value
// gives other bytes.
func TestCanonicalIgnoresWriting(t *testing.T) {
	text := canonicalBase(t)
	want := mustCanonical(t, text)
	if bytes.Contains(want, []byte("\r")) || bytes.Contains(want, []byte("#")) || !bytes.HasSuffix(want, []byte("\n")) {
		t.Fatalf("canonical form has CR, a comment or no final LF:\n%s", want)
	}
	variants := map[string]string{
		"CRLF":       strings.ReplaceAll(text, "\n", "\r\n"),
		"comments":   strings.ReplaceAll(strings.ReplaceAll(text, "\n[[", "\n# a comment\n[["), "quorum = [\"a\", \"b\"]", "quorum = [\"a\", \"b\"]   # who signs"),
		"whitespace": strings.NewReplacer(" = ", "=", ", ", ",", "\n  ", "\n\t\t", "\n\n", "\n\n\n").Replace(text),
		"key order": strings.Replace(strings.Replace(text, "name = \"rate\"\n  errors = [\"stat\", \"syst\"]", "errors = [\"stat\", \"syst\"]\n  name = \"rate\"", 1),
			"format = \"tandem/v2\"\ncampaign = \"c\"", "campaign = \"c\"\nformat = \"tandem/v2\"", 1),
		"literal strings":  strings.Replace(text, `name = "spectrum"`, `name = 'spectrum'`, 1),
		"number spelling":  strings.Replace(text, "shift = [-10.0, 10.0]", "shift = [-10, 1e1]", 1),
		"standard table":   strings.Replace(text, "  correlations = { stat = 0.5 }\n", "\n  [observable.column.correlations]\n  stat = 0.5\n", 1),
		"quoted key":       strings.Replace(text, `title = "Zenith angle"`, `"title" = "Zenith angle"`, 1),
		"all of the above": strings.ReplaceAll(strings.Replace(strings.ReplaceAll(text, "\n[[", "\n# c\n[["), "shift = [-10.0, 10.0]", "shift = [ -10 , 10 ]", 1), "\n", "\r\n"),
	}
	for name, v := range variants {
		if v == text {
			t.Fatalf("%s: the variant is the base text", name)
		}
		if got := mustCanonical(t, v); !bytes.Equal(got, want) {
			t.Errorf("%s: canonical forms differ:\n%s\nwant:\n%s", name, got, want)
		}
	}
	for name, v := range map[string]string{
		"a value":        strings.Replace(text, "shift = [-10.0, 10.0]", "shift = [-10.0, 10.5]", 1),
		"a string":       strings.Replace(text, `title = "Zenith angle"`, `title = "Zenith angle "`, 1),
		"a default set":  strings.Replace(text, `title = "Zenith angle"`, "title = \"Zenith angle\"\nedges = [\"lo\", \"hi\"]", 1),
		"an array order": strings.Replace(text, `errors = ["stat", "syst"]`, `errors = ["syst", "stat"]`, 1),
	} {
		if bytes.Equal(mustCanonical(t, v), want) {
			t.Errorf("changing %s leaves the canonical form as it was", name)
		}
	}
	// The canonical form is a protocol whose canonical form is itself.
	if again := mustCanonical(t, string(want)); !bytes.Equal(again, want) {
		t.Errorf("canonical form of the canonical form differs:\n%s", again)
	}
}

func mustCanonical(t *testing.T, text string) []byte {
	t.Helper()
	p, err := Parse("campaign.toml", []byte(text))
	if err != nil {
		t.Fatalf("%v\n%s", err, text)
	}
	return p.Canonical()
}

// TestCanonicalNeedsParse: a protocol built in code has no file, and no
// canonical form.
func TestCanonicalNeedsParse(t *testing.T) {
	if c := (&Protocol{Campaign: "c"}).Canonical(); c != nil {
		t.Errorf("canonical form of an unparsed protocol: %q", c)
	}
}

// FuzzCanonical: for every protocol Parse accepts, the canonical form is
// accepted too, is its own canonical form, and has no CR.
func FuzzCanonical(f *testing.F) {
	for _, b := range fuzzseed.Load(f, "*.toml") {
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := Parse("fuzz.toml", data)
		if err != nil {
			return
		}
		c := p.Canonical()
		if bytes.IndexByte(c, '\r') >= 0 {
			t.Fatalf("CR in the canonical form:\n%q", c)
		}
		q, err := Parse("canonical.toml", c)
		if err != nil {
			t.Fatalf("canonical form refused: %v\n%s", err, c)
		}
		if c2 := q.Canonical(); !bytes.Equal(c, c2) {
			t.Fatalf("canonical form not stable:\n%s\n---\n%s", c, c2)
		}
	})
}
