package report

import (
	"bytes"
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"

	"tandem/compare/events"
)

func syncFixture(t *testing.T, blind map[string]events.Affine) *events.Result {
	t.Helper()
	dir := "../testdata/reference"
	a, err := events.OpenCSV(filepath.Join(dir, "events_a.csv"))
	if err != nil {
		t.Fatal(err)
	}
	b, err := events.OpenCSV(filepath.Join(dir, "events_b.csv"))
	if err != nil {
		t.Fatal(err)
	}
	s, err := events.Sync(a, b, events.Options{
		Layout: events.Layout{Keys: []string{"run", "event"}, Cuts: []string{"trigger", "quality", "fiducial"}},
		Tols:   map[string]events.Tolerance{"energy": {Rel: 1e-4}, "angle": {Abs: 1e-9}},
		Blind:  blind, Binning: &events.Binning{Var: "energy", Edges: []float64{0, 10, 20, 40, 80, 1000}},
		LabelA: "heron", LabelB: "otter"})
	if err != nil {
		t.Fatal(err)
	}
	return events.Evaluate(s)
}

// The JSON contract of the issue: verdict, matched {common, only_a,
// only_b}, variables [{name, compared, outside_tolerance, max_abs_diff,
// max_rel_diff}], cutflow [{cut, a, b, both, only_a, only_b, p_value}] in
// cut order.
func TestSyncJSONContract(t *testing.T) {
	r := syncFixture(t, nil)
	var buf bytes.Buffer
	if err := SyncJSON(&buf, r); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Verdict string           `json:"verdict"`
		Matched map[string]any   `json:"matched"`
		Vars    []map[string]any `json:"variables"`
		Cutflow []map[string]any `json:"cutflow"`
	}
	if err := json.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if doc.Verdict != "fail" {
		t.Errorf("verdict %q", doc.Verdict)
	}
	for _, k := range []string{"common", "only_a", "only_b"} {
		if _, ok := doc.Matched[k].(float64); !ok {
			t.Errorf("matched.%s missing", k)
		}
	}
	if len(doc.Vars) != 3 {
		t.Fatalf("%d variables", len(doc.Vars))
	}
	for _, v := range doc.Vars {
		for _, k := range []string{"name", "compared", "outside_tolerance", "max_abs_diff", "max_rel_diff"} {
			if _, ok := v[k]; !ok {
				t.Errorf("variable field %s missing", k)
			}
		}
	}
	for i, want := range []string{"trigger", "quality", "fiducial"} {
		st := doc.Cutflow[i]
		if st["cut"] != want {
			t.Errorf("cutflow[%d] = %v, want %s", i, st["cut"], want)
		}
		for _, k := range []string{"a", "b", "both", "only_a", "only_b", "p_value"} {
			if _, ok := st[k].(float64); !ok {
				t.Errorf("cutflow field %s missing", k)
			}
		}
	}
}

func TestSyncTextAndHTML(t *testing.T) {
	r := syncFixture(t, nil)
	var txt, page bytes.Buffer
	if err := SyncText(&txt, r, Style{}); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"verdict: DISAGREE", "2864 common", ">> the chains part at cut quality", "overlap per bin of energy"} {
		if !strings.Contains(txt.String(), want) {
			t.Errorf("text lacks %q", want)
		}
	}
	if err := SyncHTML(&page, r); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`<tr class="split"><td>quality`, "<svg", "2864 common"} {
		if !strings.Contains(page.String(), want) {
			t.Errorf("HTML lacks %q", want)
		}
	}
}

// With the binning variable blinded, no report shows the per-bin counts.
func TestSyncBlindedHidesCounts(t *testing.T) {
	r := syncFixture(t, map[string]events.Affine{"energy": {S: 1.3, O: 7}})
	var buf bytes.Buffer
	SyncJSON(&buf, r)
	if strings.Contains(buf.String(), `"n_a"`) {
		t.Error("JSON shows per-bin counts of a blinded binning variable")
	}
	var ov bytes.Buffer
	r.WriteOverlap(&ov)
	if !strings.HasPrefix(ov.String(), "lo,hi,rho\n") {
		t.Errorf("overlap file: %q", ov.String()[:20])
	}
}

// TestSyncEscapesNames: a variable, cut and label name carrying an ANSI
// escape and a bidirectional override (possible in Parquet and ROOT
// schemas) reaches no report raw, in any format.
func TestSyncEscapesNames(t *testing.T) {
	r := syncFixture(t, nil)
	evil := "e\x1b[2J\u202egy"
	s := *r.Summary
	s.LabelA, s.Keys = evil, append([]string{evil}, s.Keys[1:]...)
	r.Summary = &s
	r.Variables[0].Name = evil
	r.Steps[0].Cut = evil
	r.Failures = append(r.Failures, evil)
	for _, f := range SyncFormats {
		var buf bytes.Buffer
		if err := RenderSync(&buf, f, r, Style{}); err != nil {
			t.Fatal(err)
		}
		out := buf.String()
		if strings.ContainsAny(out, "\x1b\u202e") {
			t.Errorf("%s: raw escape or override in the report", f)
		}
		if !strings.Contains(out, `\x1b`) && !strings.Contains(out, `\\x1b`) {
			t.Errorf("%s: the escaped name is not shown", f)
		}
	}
}
