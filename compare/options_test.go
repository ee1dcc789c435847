package compare

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"github.com/BurntSushi/toml"
	"github.com/google/go-cmp/cmp"
)

// TestOptionsTOML: a protocol column's options decode into Options, with a
// correlation given as a number or as a per-bin column name.
func TestOptionsTOML(t *testing.T) {
	const doc = `
alpha = 0.05
max_pull = 4
subset = false
correlation = 0
correlations = { syst = 0.4, lumi = 1, eff = "rho_eff" }
overlap = { count = "n", common = "n_common" }
`
	o := Defaults()
	if _, err := toml.Decode(doc, &o); err != nil {
		t.Fatal(err)
	}
	want := Defaults()
	want.Alpha, want.MaxPull = 0.05, 4
	want.Default = Number(0)
	want.Correlations = map[string]Rho{"syst": Number(0.4), "lumi": Number(1), "eff": {Column: "rho_eff", Set: true}}
	want.Overlap = Overlap{Count: "n", Common: "n_common"}
	if d := cmp.Diff(want, o); d != "" {
		t.Errorf("decoded options (-want +got):\n%s", d)
	}
	if err := o.Validate(); err != nil {
		t.Errorf("valid options refused: %v", err)
	}
	if !o.Declared() {
		t.Error("a written correlation = 0 counts as declared")
	}
	var buf strings.Builder
	if err := toml.NewEncoder(&buf).Encode(map[string]any{"correlations": o.Correlations}); err != nil {
		t.Fatal(err)
	}
	var back struct{ Correlations map[string]Rho }
	if _, err := toml.Decode(buf.String(), &back); err != nil {
		t.Fatalf("re-decoding %q: %v", buf.String(), err)
	}
	if d := cmp.Diff(o.Correlations, back.Correlations); d != "" {
		t.Errorf("TOML round trip of correlations (-want +got):\n%s", d)
	}
	// the whole options, declared and not, survive a TOML round trip
	for _, o := range []Options{o, Defaults()} {
		var buf strings.Builder
		if err := toml.NewEncoder(&buf).Encode(o); err != nil {
			t.Fatal(err)
		}
		back := Defaults()
		if _, err := toml.Decode(buf.String(), &back); err != nil {
			t.Fatalf("re-decoding %q: %v", buf.String(), err)
		}
		if d := cmp.Diff(o, back); d != "" {
			t.Errorf("TOML round trip of %q (-want +got):\n%s", buf.String(), d)
		}
	}
	for _, bad := range []string{`correlation = 1.5`, `correlations = { stat = true }`, `correlations = { stat = "" }`} {
		o := Defaults()
		if _, err := toml.Decode(bad, &o); err == nil {
			t.Errorf("%s: accepted", bad)
		}
	}
}

// TestOptionsJSON: the options survive a JSON round trip (a statement or
// report may carry them).
func TestOptionsJSON(t *testing.T) {
	o := Defaults()
	o.MaxPull, o.Default = 4, Number(0.25)
	o.Correlations = map[string]Rho{"lumi": Number(1), "eff": {Column: "rho_eff", Set: true}}
	o.Overlap = Overlap{Count: "n", Common: "n_common"}
	for _, o := range []Options{o, Defaults()} {
		b, err := json.Marshal(o)
		if err != nil {
			t.Fatal(err)
		}
		var back Options
		if err := json.Unmarshal(b, &back); err != nil {
			t.Fatalf("decoding %s: %v", b, err)
		}
		if d := cmp.Diff(o, back); d != "" {
			t.Errorf("JSON round trip of %s (-want +got):\n%s", b, d)
		}
	}
	var r Rho
	if err := json.Unmarshal([]byte(`1.5`), &r); err == nil {
		t.Error("correlation 1.5 decoded")
	}
}

func TestOptionsValidate(t *testing.T) {
	if err := func() error { o := Defaults(); return o.Validate() }(); err != nil {
		t.Fatalf("defaults invalid: %v", err)
	}
	if o := Defaults(); o.Declared() {
		t.Error("defaults declare nothing")
	}
	for name, mod := range map[string]func(*Options){
		"alpha 1":        func(o *Options) { o.Alpha = 1 },
		"alpha negative": func(o *Options) { o.Alpha = -0.1 },
		"max pull NaN":   func(o *Options) { o.MaxPull = math.NaN() },
		"subset and rho": func(o *Options) { o.Subset, o.Default = true, Number(0.2) },
		"overlap half":   func(o *Options) { o.Overlap.Count = "n" },
		"overlap and rho": func(o *Options) {
			o.Overlap = Overlap{Count: "n", Common: "c"}
			o.Correlations = map[string]Rho{"stat": Number(0)}
		},
		"source rho range": func(o *Options) { o.Correlations = map[string]Rho{"stat": {Value: -2, Set: true}} },
	} {
		o := Defaults()
		mod(&o)
		if err := o.Validate(); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
	for in, want := range map[string]Rho{"0.5": Number(0.5), "-1": Number(-1), "rho_stat": {Column: "rho_stat", Set: true}} {
		got, err := ParseRho(in)
		if err != nil || got != want {
			t.Errorf("ParseRho(%q) = %v, %v", in, got, err)
		}
	}
	for _, in := range []string{"", "2", "1e3", "-0.5x", "NaN"} {
		if _, err := ParseRho(in); err == nil {
			t.Errorf("ParseRho(%q) accepted", in)
		}
	}
}
