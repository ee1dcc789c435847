package report

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"html"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
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
	for _, want := range []string{"verdict: FAIL", "2864 common", ">> the chains part at cut quality", "overlap per bin of energy"} {
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
	// the tolerance, which applies to true values, is not drawn on the
	// blinded relative differences of energy (but is on angle's)
	var page bytes.Buffer
	if err := SyncHTML(&page, r); err != nil {
		t.Fatal(err)
	}
	figure := func(name string) string {
		fig := page.String()
		fig = fig[strings.Index(fig, `aria-label="relative differences of `+name+`"`):]
		return fig[:strings.Index(fig, "</svg>")]
	}
	if fig := figure("energy"); !strings.Contains(fig, "energy (blinded)") || strings.Contains(fig, ">tolerance<") {
		t.Error("blinded energy: histogram not marked blinded, or the true-value tolerance drawn on it")
	}
	if !strings.Contains(figure("hits"), ">tolerance<") {
		t.Error("hits is not blinded, yet its relative tolerance is not drawn")
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

// numberWrapScript, added to a copy of the sync page by the test only,
// finds every number in the page's text outside the figures and reports
// those whose characters the browser laid out on more than one line
// ("1.39e-" at the end of one line, "17" on the next).
const numberWrapScript = `<script>
(function () {
  var re = /[-+\u2212]?[0-9][0-9.,]*(?:[eE][-+\u2212]?[0-9]+)?%?/g, out = {numbers: 0, wrapped: []};
  var walk = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT, null);
  for (var n = walk.nextNode(); n; n = walk.nextNode()) {
    if (n.parentElement.closest('svg')) continue;
    var m;
    while ((m = re.exec(n.data)) !== null) {
      var r = document.createRange();
      r.setStart(n, m.index); r.setEnd(n, m.index + m[0].length);
      var tops = {};
      Array.prototype.forEach.call(r.getClientRects(), function (b) { if (b.width > 0) tops[Math.round(b.top)] = 1; });
      out.numbers++;
      if (Object.keys(tops).length > 1) out.wrapped.push(m[0]);
    }
  }
  var pre = document.createElement('pre');
  pre.id = 'numwrap';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>`

// TestSyncPageInChromium renders the sync page in headless Chromium at a
// projector's 1280×720 and at a narrow 900 px window: no number broken
// across lines (the old page wrapped "1.39e-17" after "e-"), every figure
// text at least 12 px and inside its figure with no two overlapping, the
// histograms with numbered axes, the cut-flow figure and the banner.
// TANDEM_SCREENSHOTS=DIR keeps a screenshot of the first screen.
func TestSyncPageInChromium(t *testing.T) {
	bin := chromium(t)
	r := syncFixture(t, nil)
	long := *r.Summary
	long.LabelA, long.LabelB = "/data/groups/heron/2026-11/events_final_v3.parquet", "/data/groups/otter/2026-11/events_final_v7.csv"
	rl := *r
	rl.Summary = &long
	for _, c := range []struct {
		name  string
		r     *events.Result
		width int
	}{{"short labels", r, 1280}, {"long labels", &rl, 1280}, {"narrow", r, 900}} {
		var buf bytes.Buffer
		if err := SyncHTML(&buf, c.r); err != nil {
			t.Fatal(err)
		}
		page := buf.String()
		for _, want := range []string{`<div class="banner fail" role="status"><b>fail</b>`, `aria-label="cut-flow efficiencies"`,
			`>events</text>`, `>relative difference |a−b| / max(|a|, |b|)</text>`, `>10³</text>`, `>10⁴</text>`} {
			if !strings.Contains(page, want) {
				t.Errorf("%s: page lacks %q", c.name, want)
			}
		}
		dir := t.TempDir()
		path := filepath.Join(dir, "sync.html")
		probe := strings.Replace(page, "</body>", measureScript+numberWrapScript+"</body>", 1)
		if err := os.WriteFile(path, []byte(probe), 0o644); err != nil {
			t.Fatal(err)
		}
		args := chromiumArgs(dir, c.width)
		args[len(args)-1] = fmt.Sprintf("--window-size=%d,720", c.width)
		dom, err := exec.Command(bin, append(args, "--dump-dom", "file://"+path)...).Output()
		if err != nil {
			t.Fatalf("chromium --dump-dom: %v", err)
		}
		var m struct {
			Figures, Texts  int
			MinPx           float64
			Small, Overlaps []string
			Outside         []string
		}
		var nw struct {
			Numbers int
			Wrapped []string
		}
		for id, v := range map[string]any{"measure": &m, "numwrap": &nw} {
			found := regexp.MustCompile(`<pre id="` + id + `">(.*?)</pre>`).FindSubmatch(dom)
			if found == nil {
				t.Fatalf("%s: no %s output in the rendered page", c.name, id)
			}
			if err := json.Unmarshal([]byte(html.UnescapeString(string(found[1]))), v); err != nil {
				t.Fatal(err)
			}
		}
		if m.Figures != 2*(2+len(r.Variables)) { // measured twice (see measureScript)
			t.Errorf("%s: %d figures, want %d", c.name, m.Figures/2, 2+len(r.Variables))
		}
		if len(m.Small) > 0 || len(m.Overlaps) > 0 || len(m.Outside) > 0 {
			t.Errorf("%s: small %v; overlapping %v; outside %v", c.name, m.Small, m.Overlaps, m.Outside)
		}
		if nw.Numbers < 100 || len(nw.Wrapped) > 0 {
			t.Errorf("%s: %d numbers, wrapped: %v", c.name, nw.Numbers, nw.Wrapped)
		}
		if keep := os.Getenv("TANDEM_SCREENSHOTS"); keep != "" && c.width == 1280 {
			shot := filepath.Join(keep, "sync-"+strings.ReplaceAll(c.name, " ", "-")+".png")
			if out, err := exec.Command(bin, append(chromiumArgs(dir, 1280)[:len(args)-1], "--window-size=1280,720", "--screenshot="+shot, "file://"+filepath.Join(dir, "sync.html"))...).CombinedOutput(); err != nil {
				t.Errorf("screenshot: %v\n%s", err, out)
			}
		}
	}
}

// The JUnit document parses back (encoding/xml) with one case per
// variable and per cut plus the matching, failing exactly where the
// result fails; the Markdown has the verdict, a row per variable and per
// cut, and the input order.
func TestSyncJUnitAndMarkdown(t *testing.T) {
	r := syncFixture(t, nil)
	var buf bytes.Buffer
	if err := SyncJUnit(&buf, r); err != nil {
		t.Fatal(err)
	}
	var doc junitSuites
	if err := xml.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	wantFail := 0
	for _, v := range r.Variables {
		if !v.Pass {
			wantFail++
		}
	}
	for _, s := range r.Steps {
		if s.Differs {
			wantFail++
		}
	}
	if doc.Tests != 1+len(r.Variables)+len(r.Steps) || doc.Failures != wantFail || wantFail == 0 {
		t.Errorf("JUnit: %d tests, %d failures; want %d and %d", doc.Tests, doc.Failures, 1+len(r.Variables)+len(r.Steps), wantFail)
	}
	buf.Reset()
	if err := SyncMarkdown(&buf, r); err != nil {
		t.Fatal(err)
	}
	md := buf.String()
	for _, want := range []string{"## Event sync heron vs otter: **fail**", "| energy | **fail** |", "| **quality** (the chains part here) |",
		"Tables not sorted by key", "### Overlap per bin of energy"} {
		if !strings.Contains(md, want) {
			t.Errorf("Markdown lacks %q", want)
		}
	}
}
