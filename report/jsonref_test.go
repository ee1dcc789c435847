package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"testing"
	"time"
	"unicode/utf8"

	"tandem/compare"
	"tandem/compare/table"
)

// jsonEscaper writes JSON text with the characters that encoding/json
// leaves raw but that must not reach a terminal (C1 controls, the
// bidirectional controls) as \uXXXX escapes. They can only stand inside
// JSON strings, where the escape means the same character, so the
// document decodes to the same values.
type jsonEscaper struct{ w io.Writer }

func (j jsonEscaper) Write(p []byte) (int, error) {
	if bytes.IndexByte(p, 0xc2) < 0 && bytes.IndexByte(p, 0xd8) < 0 && bytes.IndexByte(p, 0xe2) < 0 {
		return j.w.Write(p)
	}
	out := make([]byte, 0, len(p)+64)
	for i := 0; i < len(p); {
		r, n := utf8.DecodeRune(p[i:])
		if r >= 0x80 && unsafeRune(r) {
			out = fmt.Appendf(out, `\u%04x`, r)
		} else {
			out = append(out, p[i:i+n]...)
		}
		i += n
	}
	if _, err := j.w.Write(out); err != nil {
		return 0, err
	}
	return len(p), nil
}

// jsonEncoded writes s through encoding/json, as [JSON] did before it
// wrote the document by hand; the tests hold JSON to it.
func jsonEncoded(w io.Writer, s *Summary, st Style) error {
	enc := json.NewEncoder(jsonEscaper{w})
	enc.SetIndent("", "  ")
	return enc.Encode(JSONValue(s, st))
}

// testStamp is a fixed stamp whose names hold characters every format
// escapes.
func testStamp() *Stamp {
	return &Stamp{Tool: "tandem test <rev> & \"q\"", Time: time.Date(2026, 12, 2, 15, 4, 5, 0, time.UTC),
		Inputs: []Input{{Name: "heron/spectrum.csv", SHA256: "a3f1"}, {Name: "o\u202etter <&> ]]> \x00.csv"}}}
}

// jsonSummaries are summaries that reach every branch of the JSON writer:
// the fixtures, the figures' hard cases, infinite and undefined numbers,
// zero-σ and incomparable bins, nil and empty lists, and free text with
// every kind of character encoding/json and jsonEscaper treat specially.
func jsonSummaries(t testing.TB) map[string]*Summary {
	out := map[string]*Summary{"fixture": fixture(t), "figures": figureFixture(t), "empty": {}}
	mk := func(v, e []float64) *table.Series {
		s := &table.Series{Column: "y", V: v, Down: e, Up: e}
		for i := range v {
			s.Lo, s.Hi = append(s.Lo, float64(i)), append(s.Hi, float64(i+1))
		}
		return s
	}
	odd := &Summary{Title: "odd", Accepted: []Acceptance{{Reason: "nil by"}}}
	for i, c := range [][4][]float64{
		{{1e300, 1, 1, 2}, {1e-10, 1, 0, 0}, {-1e300, 1.5, 2, 2}, {1e-10, 1, 0, 0}}, // ±Inf and NaN pulls
		{{5, 6}, {0.5, 0.5}, {5, 6}, {0.5, 0.5}},                                    // ndf 0 with ρ = 1
		{{1e-9, 2e-7, 3e22}, {1e-10, 1e-8, 1e21}, {1.1e-9, 2e-7, 3.1e22}, {1e-10, 1e-8, 1e21}},
		{{math.Copysign(0, -1), 0, 1}, {1, 1, 1}, {0, 1e-300, 1}, {1, 1, 1}},
	} {
		r, err := compare.Series(mk(c[0], c[1]), mk(c[2], c[3]), compare.Options{Correlation: float64(i%2) * 0.999999, Limits: compare.DefaultLimits})
		if err != nil {
			t.Fatal(err)
		}
		odd.Entries = append(odd.Entries, Entry{Observable: fmt.Sprint("odd", i), Result: r})
	}
	out["odd"] = odd
	state := fixture(t)
	state.Missing = []Missing{{Observable: "zenith", Verdict: VerdictIncomplete, Reason: "not sealed yet by otter <&>"},
		{Observable: "azi\u2028muth", Verdict: VerdictPending, Reason: "re-sealed ]]> by heron"}}
	state.Stale = []string{"heron: stale after a seal of zenith", "\xff: x"}
	out["state"] = state
	// large: longer than a page flush, with lists long enough to be
	// formatted on every core (2·chunkNums and more), and undefined and
	// infinite values spread through them
	n := 2*chunkNums + 4321
	rng := rand.New(rand.NewPCG(3, 4))
	va, vb, ea := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range n {
		va[i], vb[i], ea[i] = rng.NormFloat64()*1e3, rng.NormFloat64()*1e-3, math.Abs(rng.NormFloat64())
		switch i % 997 {
		case 5:
			ea[i], va[i], vb[i] = 0, 1, 2 // infinite pull
		case 7:
			ea[i], va[i], vb[i] = 0, 3, 3 // undefined pull
		}
	}
	large, err := compare.Series(mk(va, ea), mk(vb, ea), compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	out["large"] = &Summary{Entries: []Entry{{Observable: "large", Result: large}}}
	text := fixture(t)
	text.Title = "ti\x1b[2Jtle <b>&amp;</b> \"q\" \\ \b\f\n\r\t\x00\x7f"
	text.Notes = []string{"no\u202ete", "\u2028\u2029", "bad \xff\xfe utf8 \xe2\x80", "\u0085 \u061c \u200e\u200f \u2066\u2069 é 漢 😀"}
	text.Accepted = []Acceptance{{By: []string{"he\u0085ron", "x"}, Reason: "re\u2066ason\x07"}}
	text.Entries[1].Files = [2]string{"a\u202e.csv", ""}
	r := *text.Entries[1].Result
	r.Column, r.LabelA, r.Warnings = "co\x1blumn", "x\u200fy", []string{"w<1>"}
	text.Entries[1].Result = &r
	out["text"] = text
	return out
}

// TestJSONWriterMatchesEncoding: the hand-written JSON is byte for byte
// what encoding/json (the reference) writes for the same value.
func TestJSONWriterMatchesEncoding(t *testing.T) {
	for name, s := range jsonSummaries(t) {
		for _, st := range []Style{{}, {Stamp: testStamp()}} {
			var got, streamed, want bytes.Buffer
			if err := JSON(&got, s, st); err != nil {
				t.Fatal(err)
			}
			// a writer that is not a bytes.Buffer gets the document in
			// pieces, as it is written
			w := &countingWriter{w: &streamed}
			if err := JSON(w, s, st); err != nil {
				t.Fatal(err)
			}
			if err := jsonEncoded(&want, s, st); err != nil {
				t.Fatal(err)
			}
			checkSameJSON(t, name, got.Bytes(), want.Bytes())
			checkSameJSON(t, name+" (streamed)", streamed.Bytes(), want.Bytes())
			if name == "large" && w.writes < 4 {
				t.Errorf("large: the JSON came in %d writes of %d bytes, not streamed", w.writes, streamed.Len())
			}
		}
	}
}

// countingWriter counts the writes it passes on.
type countingWriter struct {
	w      io.Writer
	writes int
}

func (c *countingWriter) Write(p []byte) (int, error) {
	c.writes++
	return c.w.Write(p)
}

// checkSameJSON reports where got first differs from want.
func checkSameJSON(t *testing.T, name string, g, w []byte) {
	t.Helper()
	if !bytes.Equal(g, w) {
		i := 0
		for i < min(len(g), len(w)) && g[i] == w[i] {
			i++
		}
		t.Errorf("%s: JSON differs from encoding/json at byte %d:\n got %q\nwant %q", name, i, g[max(0, i-80):min(len(g), i+80)], w[max(0, i-80):min(len(w), i+80)])
	}
}

// FuzzJSONWriter holds the JSON writer to encoding/json for any free text
// and any numbers.
func FuzzJSONWriter(f *testing.F) {
	f.Add("plain", "re\u2066ason\x07 <&>", 1.5, 1e-7, math.Inf(1))
	f.Add("\xff\u2028", "\u0085\"\\", math.Copysign(0, -1), 1e21, math.NaN())
	f.Fuzz(func(t *testing.T, title, reason string, x, y, z float64) {
		rng := rand.New(rand.NewPCG(math.Float64bits(x), math.Float64bits(y)))
		n := 1 + rng.IntN(5)
		a := &table.Series{Column: reason, V: make([]float64, n), Down: make([]float64, n)}
		b := &table.Series{Column: reason, V: make([]float64, n), Down: make([]float64, n)}
		vals := []float64{x, y, z, 0, 1, rng.NormFloat64()}
		for i := range n {
			a.Lo, a.Hi = append(a.Lo, float64(i)), append(a.Hi, float64(i+1))
			a.V[i], b.V[i] = vals[rng.IntN(len(vals))], vals[rng.IntN(len(vals))]
			a.Down[i], b.Down[i] = math.Abs(vals[rng.IntN(len(vals))]), math.Abs(vals[rng.IntN(len(vals))])
		}
		b.Lo, b.Hi, a.Up, b.Up = a.Lo, a.Hi, a.Down, b.Down
		s := &Summary{Title: title, Notes: []string{reason}, Accepted: []Acceptance{{By: []string{title}, Reason: reason}}}
		if r, err := compare.Series(a, b, compare.Options{Limits: compare.DefaultLimits}); err == nil {
			r.LabelA = title
			s.Entries = []Entry{{Observable: title, Title: reason, Result: r}}
		}
		var got, want bytes.Buffer
		if err := JSON(&countingWriter{w: &got}, s, Style{Stamp: &Stamp{Tool: title, Inputs: []Input{{Name: reason, SHA256: title}}}}); err != nil {
			t.Fatal(err)
		}
		if err := jsonEncoded(&want, s, Style{Stamp: &Stamp{Tool: title, Inputs: []Input{{Name: reason, SHA256: title}}}}); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want.Bytes()) {
			t.Errorf("JSON differs from encoding/json:\n got %q\nwant %q", got.Bytes(), want.Bytes())
		}
		if !json.Valid(got.Bytes()) {
			t.Error("invalid JSON")
		}
	})
}

// jsonNumberRef is the JSON number as encoding/json's float encoder writes
// it: shortest 'f', or 'e' below 1e-6 and from 1e21 on with "e-07"
// shortened to "e-7".
func jsonNumberRef(v float64) string {
	b, _ := json.Marshal(v)
	return string(b)
}

// TestJSONNumbersMatchEncoding: the short cuts for integers and short
// decimals write what encoding/json writes, at and around their limits.
func TestJSONNumbersMatchEncoding(t *testing.T) {
	check := func(v float64) {
		t.Helper()
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return
		}
		if got, want := string(appendJSONNumber(nil, v)), jsonNumberRef(v); got != want {
			t.Fatalf("appendJSONNumber(%v) = %s, encoding/json writes %s", v, got, want)
		}
	}
	for _, v := range []float64{0, math.Copysign(0, -1), 1, -1, 0.1, 0.2, 0.3, 0.1 + 0.2, 1e-4, 1.5e-4, 1e-5, 1e-6, 1e-7, 9.9999e8, 1e9 - 0.0001, 1e9, 1e9 + 0.5,
		1 << 53, 1<<53 - 1, 1<<53 + 2, -(1<<53 - 1), 1e15, 1e20, 1e21, 123.45678, 31.62, 1023, -0.35355339059327373, 2.675, 1.005} {
		check(v)
	}
	rng := rand.New(rand.NewPCG(7, 8))
	for range 50_000 {
		scale := math.Pow(10, float64(rng.IntN(14)-4))
		x := (rng.Float64() - 0.5) * scale
		check(x)
		for p := range 6 {
			check(math.Round(x*pow10[p]) / pow10[p]) // short decimals, and their neighbours
			check(math.Nextafter(math.Round(x*pow10[p])/pow10[p], math.Inf(1)))
		}
	}
}
