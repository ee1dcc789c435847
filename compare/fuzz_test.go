package compare

import (
	"math"
	"tandem/compare/fuzzseed"
	"testing"

	"github.com/BurntSushi/toml"
)

// FuzzOptionsTOML: decoding a protocol column's options never panics; what
// decodes and validates has every correlation in [-1, 1] or a column name,
// and survives a TOML round trip of its correlations. The command-line
// form of a correlation (ParseRho) is fuzzed on the same inputs.
func FuzzOptionsTOML(f *testing.F) {
	for _, b := range fuzzseed.Load(f, "options-*.toml") {
		f.Add(string(b))
	}
	f.Add("0.5")
	f.Add("rho_stat")
	f.Fuzz(func(t *testing.T, doc string) {
		if r, err := ParseRho(doc); err == nil {
			if r.Column == "" && !(r.Value >= -1 && r.Value <= 1) {
				t.Fatalf("ParseRho(%q) accepted %v", doc, r.Value)
			}
		}
		o := Defaults()
		if _, err := toml.Decode(doc, &o); err != nil {
			return
		}
		if err := o.Validate(); err != nil {
			return
		}
		for _, r := range append([]Rho{o.Default}, mapValues(o.Correlations)...) {
			if r.Column == "" && (math.IsNaN(r.Value) || math.Abs(r.Value) > 1) {
				t.Fatalf("validated correlation %v", r)
			}
		}
		b, err := toml.Marshal(map[string]any{"correlations": o.Correlations})
		if err != nil {
			t.Fatalf("encoding %v: %v", o.Correlations, err)
		}
		var back struct{ Correlations map[string]Rho }
		if _, err := toml.Decode(string(b), &back); err != nil {
			t.Fatalf("re-decoding %q: %v", b, err)
		}
		for k, v := range o.Correlations {
			if back.Correlations[k] != v {
				t.Fatalf("round trip of %q: %v became %v", k, v, back.Correlations[k])
			}
		}
	})
}

func mapValues(m map[string]Rho) []Rho {
	var out []Rho
	for _, v := range m {
		out = append(out, v)
	}
	return out
}
