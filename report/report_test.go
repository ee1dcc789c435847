package report

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"flag"
	"fmt"
	"html"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/google/go-cmp/cmp"

	"tandem/compare"
	"tandem/compare/table"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/golden")

// fixture builds a small deterministic summary: one agreeing and one
// disagreeing comparison of hand-written tables.
func fixture(t testing.TB) *Summary {
	t.Helper()
	mk := func(vals ...float64) *table.Series {
		n := len(vals)
		s := &table.Series{Column: "rate", Lo: make([]float64, n), Hi: make([]float64, n), V: vals, Down: make([]float64, n)}
		for i := range vals {
			s.Lo[i], s.Hi[i] = float64(i), float64(i+1)
			s.Down[i] = math.Sqrt(math.Abs(vals[i]))
		}
		s.Up = s.Down
		return s
	}
	good, err := compare.Series(mk(100, 90, 81, 73, 66, 59), mk(98, 93, 80, 75, 64, 60), compare.Options{Correlation: 0.3, Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	bad, err := compare.Series(mk(100, 90, 81, 73, 66, 59), mk(70, 62, 55, 95, 92, 85), compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	return &Summary{
		Title:    "golden campaign",
		Campaign: "golden",
		Notes:    []string{"campaign golden is blinded"},
		Accepted: []Acceptance{{By: []string{"heron", "otter"}, Reason: "the tilt comes from a known alignment shift"}},
		Entries: []Entry{
			{Observable: "spectrum", Title: "Energy spectrum of through-going muons", Teams: [2]string{"heron", "otter"}, XLabel: "energy [GeV]", YLabel: "rate [Hz]", Blinded: true, Result: good},
			{Observable: "tilt", Teams: [2]string{"heron", "otter"}, XLabel: "cos θ", Result: bad},
		},
	}
}

// TestGolden compares the Markdown, JUnit and text renderings with the
// files in testdata/golden; run with -update to rewrite them after an
// intended change, and review the diff.
// The second set is a campaign that is not complete: an observable not
// sealed by every team, one waiting for the blind step, a stale sign-off.
// Both carry a fixed stamp, as tests inject it.
func TestGolden(t *testing.T) {
	full := fixture(t)
	st := Style{Stamp: &Stamp{Tool: "tandem v0.0.0-golden 0123456789ab", Time: time.Date(2026, 12, 2, 15, 4, 5, 0, time.UTC),
		Inputs: []Input{{Name: "tables/heron/spectrum.csv", SHA256: strings.Repeat("ab", 32)}, {Name: "tables/otter/spectrum.csv", SHA256: strings.Repeat("cd", 32)}}}}
	incomplete := incompleteFixture(t)
	for _, c := range []struct {
		s                    *Summary
		format, file, reason string
	}{
		{full, "markdown", "summary.md", "paste-ready Markdown for meeting pages"},
		{full, "junit", "summary.junit.xml", "CI systems read these test cases"},
		{full, "text", "summary.txt", "the default terminal output, without colour"},
		{incomplete, "markdown", "incomplete.md", "an incomplete campaign says so on top"},
		{incomplete, "junit", "incomplete.junit.xml", "a failing case per missing comparison and stale sign-off"},
		{incomplete, "text", "incomplete.txt", "an incomplete campaign says so on the verdict line"},
	} {
		var buf bytes.Buffer
		if err := Render(&buf, c.format, c.s, st); err != nil {
			t.Fatal(err)
		}
		path := filepath.Join("testdata", "golden", c.file)
		if *update {
			if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(path)
		if err != nil {
			t.Fatalf("%v (run go test ./report -update)", err)
		}
		if diff := cmp.Diff(string(want), buf.String()); diff != "" {
			t.Errorf("%s (%s) differs from %s (-want +got):\n%s", c.format, c.reason, path, diff)
		}
	}
}

// incompleteFixture is the fixture of a campaign that is not complete:
// zenith is not sealed by otter, azimuth waits for the blind step after a
// re-seal, and heron's sign-off is stale.
func incompleteFixture(t testing.TB) *Summary {
	s := fixture(t)
	s.Accepted = nil
	s.Missing = []Missing{
		{Observable: "zenith", Verdict: VerdictIncomplete, Reason: "not sealed yet by otter"},
		{Observable: "azimuth", Verdict: VerdictPending, Reason: "sealed by every team; the custodian has not opened it yet (tandem blind)"},
	}
	s.Stale = []string{"heron: stale after a seal of azimuth"}
	return s
}

// TestJUnitShape checks the usual JUnit XML shape CI systems expect
// (common practice, as consumed by Jenkins/GitLab: testsuites > testsuite >
// testcase, failures as <failure message=...> children, counts that add up).
func TestJUnitShape(t *testing.T) {
	var buf bytes.Buffer
	if err := JUnit(&buf, fixture(t), Style{}); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		XMLName  xml.Name `xml:"testsuites"`
		Tests    int      `xml:"tests,attr"`
		Failures int      `xml:"failures,attr"`
		Suites   []struct {
			Name     string `xml:"name,attr"`
			Tests    int    `xml:"tests,attr"`
			Failures int    `xml:"failures,attr"`
			Cases    []struct {
				Name      string `xml:"name,attr"`
				Classname string `xml:"classname,attr"`
				Failure   *struct {
					Message string `xml:"message,attr"`
					Text    string `xml:",chardata"`
				} `xml:"failure"`
			} `xml:"testcase"`
		} `xml:"testsuite"`
	}
	if err := xml.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatalf("not XML: %v", err)
	}
	tests, fails := 0, 0
	for _, s := range doc.Suites {
		if s.Name == "" || s.Tests != len(s.Cases) {
			t.Errorf("suite %q: tests=%d, cases=%d", s.Name, s.Tests, len(s.Cases))
		}
		f := 0
		for _, c := range s.Cases {
			if c.Name == "" || c.Classname == "" {
				t.Errorf("case without name or classname: %+v", c)
			}
			if c.Failure != nil {
				f++
				if c.Failure.Message == "" || !strings.Contains(c.Failure.Text, "chi2 p-value") {
					t.Errorf("failure without message or criteria: %+v", c.Failure)
				}
			}
		}
		if f != s.Failures {
			t.Errorf("suite %q: failures=%d, counted %d", s.Name, s.Failures, f)
		}
		tests += s.Tests
		fails += f
	}
	if tests != doc.Tests || fails != doc.Failures || tests != 2 || fails != 1 {
		t.Errorf("totals tests=%d/%d failures=%d/%d", doc.Tests, tests, doc.Failures, fails)
	}
}

// TestJSONContract checks the field names scripts rely on (the brief's
// contract).
func TestJSONContract(t *testing.T) {
	var buf bytes.Buffer
	if err := JSON(&buf, fixture(t), Style{}); err != nil {
		t.Fatal(err)
	}
	var doc map[string]any
	if err := json.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if doc["verdict"] != "fail" {
		t.Errorf("verdict %v", doc["verdict"])
	}
	if _, ok := doc["accepted_disagreements"].([]any); !ok {
		t.Errorf("accepted_disagreements is not a list: %v", doc["accepted_disagreements"])
	}
	obs := doc["observables"].([]any)
	for _, o := range obs {
		m := o.(map[string]any)
		for _, k := range []string{"name", "column", "bins", "chi2", "ndf", "p_value", "pull_mean", "pull_width", "max_abs_pull",
			"max_pull_p_value", "ks_p_value", "runs_p_value", "verdict", "failures", "pulls", "teams"} {
			if _, ok := m[k]; !ok {
				t.Errorf("observable %v lacks %q", m["name"], k)
			}
		}
		if len(m["pulls"].([]any)) != int(m["bins"].(float64)) {
			t.Errorf("pulls length")
		}
		// the inputs and settings beside the contract
		for _, k := range []string{"labels", "criteria", "limits", "family_size", "sources", "accepted_disagreement", "per_bin"} {
			if _, ok := m[k]; !ok {
				t.Errorf("observable %v lacks %q", m["name"], k)
			}
		}
		per := m["per_bin"].(map[string]any)
		for _, k := range []string{"lo", "hi", "a", "error_a", "b", "error_b", "difference", "sigma_difference"} {
			if xs, ok := per[k].([]any); !ok || len(xs) != int(m["bins"].(float64)) {
				t.Errorf("observable %v: per_bin.%s is not one value per bin", m["name"], k)
			}
		}
		if a := m["limits"].(map[string]any)["alpha"]; a != 0.01 {
			t.Errorf("limits.alpha = %v", a)
		}
	}
}

func TestHTMLEscapesAndNoTrueValuesWhenBlinded(t *testing.T) {
	s := fixture(t)
	s.Entries[0].Observable = "<script>alert(1)</script>"
	var buf bytes.Buffer
	if err := HTML(&buf, s, Style{}); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	if strings.Contains(out, "<script") {
		t.Errorf("unescaped markup in HTML")
	}
	for _, bad := range []string{"http://", "https://", "<img", "<link", "@import"} {
		if strings.Contains(strings.ReplaceAll(out, `xmlns="http://www.w3.org/2000/svg"`, ""), bad) {
			t.Errorf("HTML is not self-contained: contains %q", bad)
		}
	}
	// values, ratio, pulls, and the pull histogram on a linear and a log
	// axis; no ratio on blinded values, which blinding does not keep
	// (fact of the affine map: (s·a+t)/(s·b+t) ≠ a/b unless t = 0)
	if got, want := strings.Count(out, "<svg"), 5*len(s.Entries)-blindedEntries(s); got != want {
		t.Errorf("%d figures, want %d", got, want)
	}
	if got, want := strings.Count(out, `class="ratio"`), len(s.Entries)-blindedEntries(s); got != want || blindedEntries(s) == 0 {
		t.Errorf("%d ratio panels, want %d (one per comparison of true values; the fixture has %d blinded)", got, want, blindedEntries(s))
	}
}

// blindedEntries counts the comparisons of blinded values.
func blindedEntries(s *Summary) int {
	n := 0
	for _, e := range s.Entries {
		if e.Blinded {
			n++
		}
	}
	return n
}

// chromium finds headless Chromium (Debian's chromium package) or skips.
func chromium(t *testing.T) string {
	t.Helper()
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
		t.Fatal("chromium is required in CI but not installed")
	}
	t.Skip("skipping: chromium is not installed (apt-get install chromium)")
	return ""
}

func chromiumArgs(dir string, width int) []string {
	return []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync", "--hide-scrollbars",
		"--user-data-dir=" + filepath.Join(dir, "profile"), fmt.Sprintf("--window-size=%d,1400", width)}
}

// TestHTMLInChromium renders the report in headless Chromium, checks the
// screenshot is not blank and that the browser built every figure.
// TANDEM_SCREENSHOTS=DIR keeps full-page screenshots for a person to look at.
func TestHTMLInChromium(t *testing.T) {
	bin := chromium(t)
	dir := t.TempDir()
	page := filepath.Join(dir, "report.html")
	var buf bytes.Buffer
	s := fixture(t)
	if err := HTML(&buf, s, Style{}); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(page, buf.Bytes(), 0o644)
	args := chromiumArgs(dir, 1100)
	shot := filepath.Join(dir, "shot.png")
	if out, err := exec.Command(bin, append(args, "--screenshot="+shot, "file://"+page)...).CombinedOutput(); err != nil {
		t.Fatalf("chromium screenshot: %v\n%s", err, out)
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	colors := map[uint32]int{}
	nonWhite := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y += 2 {
		for x := b.Min.X; x < b.Max.X; x += 2 {
			r, g, bl, _ := img.At(x, y).RGBA()
			colors[(r>>12)<<8|(g>>12)<<4|bl>>12]++
			if r < 0xf000 || g < 0xf000 || bl < 0xf000 {
				nonWhite++
			}
		}
	}
	if nonWhite < 2000 || len(colors) < 8 {
		t.Errorf("screenshot looks blank: %d non-white samples, %d colours", nonWhite, len(colors))
	}
	dom, err := exec.Command(bin, append(args, "--dump-dom", "file://"+page)...).Output()
	if err != nil {
		t.Fatalf("chromium --dump-dom: %v", err)
	}
	// The page prints, or saves as PDF, through the print stylesheet: a
	// PDF of at least one page for the top and one per comparison (each
	// starts a new page). Chromium writes one uncompressed "/Type /Page"
	// dictionary per page. This does not prove where the breaks fall.
	pdf := filepath.Join(dir, "report.pdf")
	if out, err := exec.Command(bin, append(args, "--no-pdf-header-footer", "--print-to-pdf="+pdf, "file://"+page)...).CombinedOutput(); err != nil {
		t.Fatalf("chromium --print-to-pdf: %v\n%s", err, out)
	}
	data, err := os.ReadFile(pdf)
	if err != nil {
		t.Fatal(err)
	}
	if pages := len(regexp.MustCompile(`/Type\s*/Page[^s]`).FindAll(data, -1)); !bytes.HasPrefix(data, []byte("%PDF-")) || pages < 1+len(s.Entries) {
		t.Errorf("printed report has %d pages, want at least %d", pages, 1+len(s.Entries))
	}
	for _, label := range []string{"values of heron and otter", "ratio heron / otter", "pulls per bin", "pull distribution", "pull distribution (log scale)"} {
		want := len(s.Entries)
		if strings.HasPrefix(label, "ratio") {
			want -= blindedEntries(s)
		}
		if got := strings.Count(string(dom), fmt.Sprintf(`aria-label="%s"`, label)); got != want {
			t.Errorf("figure %q appears %d times in the rendered DOM, want %d", label, got, want)
		}
	}
}

// measureScript, added to a copy of the page by the test only (reports
// carry no script), measures every visible SVG text: its rendered font
// size in CSS pixels and its box on the page, and lists the pairs of texts
// in one figure whose boxes overlap.
const measureScript = `<script>
(function () {
  var out = {figures: 0, small: [], overlaps: [], outside: [], texts: 0, minPx: 1e9};
  function measure() { document.querySelectorAll('svg').forEach(function (svg) {
    if (getComputedStyle(svg).display === 'none') return;
    out.figures++;
    var boxes = [];
    svg.querySelectorAll('text').forEach(function (t) {
      var m = t.getScreenCTM();
      var px = parseFloat(getComputedStyle(t).fontSize) * Math.hypot(m.a, m.b);
      out.texts++;
      out.minPx = Math.min(out.minPx, px);
      if (px < 12) out.small.push(t.textContent + ' (' + px.toFixed(1) + ' px)');
      var r = t.getBoundingClientRect(), f = svg.getBoundingClientRect();
      if (r.left < f.left - 1 || r.right > f.right + 1 || r.top < f.top - 1 || r.bottom > f.bottom + 1) out.outside.push(t.textContent);
      boxes.push({r: r, s: t.textContent});
    });
    for (var i = 0; i < boxes.length; i++) for (var j = i + 1; j < boxes.length; j++) {
      var a = boxes[i].r, b = boxes[j].r;
      var w = Math.min(a.right, b.right) - Math.max(a.left, b.left);
      var h = Math.min(a.bottom, b.bottom) - Math.max(a.top, b.top);
      if (w > 1 && h > 1) out.overlaps.push(svg.getAttribute('aria-label') + ': "' + boxes[i].s + '" and "' + boxes[j].s + '"');
    }
  }); }
  measure();
  // the other scale of each pull histogram
  document.querySelectorAll('input.logtoggle').forEach(function (c) { c.checked = !c.checked; });
  measure();
  var pre = document.createElement('pre');
  pre.id = 'measure';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>`

// figureFixture holds the hard cases for the figures: a small agreeing
// comparison, one with pulls far beyond any axis, a 5000-bin comparison
// and a spectrum over five decades on log axes (invented numbers, seeded).
func figureFixture(t testing.TB) *Summary {
	t.Helper()
	s := fixture(t)
	rng := rand.New(rand.NewPCG(1, 1))
	mk := func(lo, hi, v, e []float64) *table.Series {
		return &table.Series{Column: "rate", Lo: lo, Hi: hi, V: v, Down: e, Up: e}
	}
	series := func(n int, edge func(i int) float64, value func(x float64) float64, shift func(i int) float64) (*table.Series, *table.Series) {
		lo, hi := make([]float64, n), make([]float64, n)
		va, vb, ea, eb := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		for i := range n {
			lo[i], hi[i] = edge(i), edge(i+1)
			mu := value((lo[i] + hi[i]) / 2)
			ea[i], eb[i] = math.Sqrt(mu), math.Sqrt(mu)
			va[i] = mu + ea[i]*rng.NormFloat64()
			vb[i] = mu + eb[i]*rng.NormFloat64() + shift(i)*eb[i]
		}
		return mk(lo, hi, va, ea), mk(lo, hi, vb, eb)
	}
	opt := compare.Options{Correlation: 0.2, Limits: compare.DefaultLimits}
	add := func(name string, a, b *table.Series) {
		r, err := compare.Series(a, b, opt)
		if err != nil {
			t.Fatal(err)
		}
		s.Entries = append(s.Entries, Entry{Observable: name, Teams: [2]string{"heron", "otter"}, XLabel: "x", YLabel: "counts", Result: r})
	}
	a, b := series(24, func(i int) float64 { return float64(i) }, func(float64) float64 { return 400 }, func(i int) float64 {
		switch i {
		case 5:
			return -20 // a pull far beyond the axis
		case 17:
			return 14
		}
		return 0
	})
	add("outliers", a, b)
	a, b = series(5000, func(i int) float64 { return float64(i) }, func(x float64) float64 { return 2e4 + 5e3*math.Sin(x/700) }, func(int) float64 { return 0 })
	add("fine", a, b)
	a, b = series(60, func(i int) float64 { return math.Pow(10, float64(i)/15) }, func(x float64) float64 { return 1e6 * math.Pow(x, -1.25) }, func(i int) float64 { return 0.02 * float64(i) })
	add("spectrum5", a, b)
	// table mode with long labels: the legend and titles must still fit
	last := &s.Entries[len(s.Entries)-1]
	last.Teams = [2]string{}
	last.LabelA, last.LabelB = "/data/groups/heron/2026-11/spectrum_final_v3.csv", "/data/groups/otter/2026-11/spectrum_final_v7.csv"
	return s
}

// TestFiguresInChromium renders the hard cases at a projector's 1280 px
// and a narrow 1000 px window and holds the figures to what a meeting
// needs: every text at least 12 px, no two texts in a figure overlapping,
// a ratio panel for every comparison, overflow marks for the pulls beyond
// the axes, and the decimation stated for 5000 bins.
func TestFiguresInChromium(t *testing.T) {
	bin := chromium(t)
	s := figureFixture(t)
	var buf bytes.Buffer
	if err := HTML(&buf, s, Style{}); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	if got, want := strings.Count(page, `class="ratio"`), len(s.Entries)-blindedEntries(s); got != want {
		t.Errorf("%d ratio panels for %d comparisons, %d of them blinded", got, len(s.Entries), blindedEntries(s))
	}
	if !strings.Contains(page, "5000 bins are drawn as 1000 groups of 5 consecutive bins") {
		t.Errorf("the 5000-bin overlay does not say how it was decimated")
	}
	sec := section(page, "outliers")
	for _, want := range []string{`<path class="overflow"`, `<rect class="overflow"`, "2 beyond ±8 (largest ", "&lt; −8: 1", "&gt; 8: 1"} {
		if !strings.Contains(sec, want) {
			t.Errorf("outliers: no %q: pulls beyond the axes are not marked", want)
		}
	}
	for _, width := range []int{1280, 1000} {
		dir := t.TempDir()
		path := filepath.Join(dir, "figures.html")
		os.WriteFile(path, []byte(strings.Replace(page, "</body>", measureScript+"</body>", 1)), 0o644)
		args := chromiumArgs(dir, width)
		dom, err := exec.Command(bin, append(args, "--dump-dom", "file://"+path)...).Output()
		if err != nil {
			t.Fatalf("chromium --dump-dom: %v", err)
		}
		_, js, ok := strings.Cut(string(dom), `<pre id="measure">`)
		js, _, _ = strings.Cut(js, "</pre>")
		var m struct {
			Figures, Texts int
			MinPx          float64
			Small          []string
			Overlaps       []string
			Outside        []string
		}
		if !ok || json.Unmarshal([]byte(html.UnescapeString(js)), &m) != nil {
			t.Fatalf("no measurement in the DOM:\n%.500s", js)
		}
		t.Logf("%d px: %d figures, %d texts, smallest %.1f px", width, m.Figures, m.Texts, m.MinPx)
		// the ratio panel of a blinded comparison is left out (two of the
		// elements measured)
		if m.Figures != 8*len(s.Entries)-2*blindedEntries(s) || m.Texts < 80*len(s.Entries) {
			t.Errorf("%d px: %d figures with %d texts shown", width, m.Figures, m.Texts)
		}
		if len(m.Small) > 0 {
			t.Errorf("%d px: %d texts smaller than 12 px, e.g. %q", width, len(m.Small), m.Small[:min(5, len(m.Small))])
		}
		if len(m.Outside) > 0 {
			t.Errorf("%d px: texts cut off at the figure's edge: %q", width, m.Outside[:min(5, len(m.Outside))])
		}
		if len(m.Overlaps) > 0 {
			t.Errorf("%d px: overlapping texts: %q", width, m.Overlaps[:min(5, len(m.Overlaps))])
		}
		if d := os.Getenv("TANDEM_SCREENSHOTS"); d != "" && width == 1280 {
			shot, _ := filepath.Abs(filepath.Join(d, "figures.png"))
			args[len(args)-1] = "--window-size=1280,9000"
			if out, err := exec.Command(bin, append(args, "--screenshot="+shot, "file://"+path)...).CombinedOutput(); err != nil {
				t.Errorf("screenshot: %v\n%s", err, out)
			}
		}
	}
}

// section returns the part of the page about one observable.
func section(page, name string) string {
	i := strings.Index(page, "<h2 id=")
	for i >= 0 {
		j := strings.Index(page[i+1:], "<h2 id=")
		end := len(page)
		if j >= 0 {
			end = i + 1 + j
		}
		if strings.Contains(page[i:min(end, i+200)], ">"+name+" / ") {
			return page[i:end]
		}
		if j < 0 {
			break
		}
		i = end
	}
	return ""
}

// BenchmarkHTML500 renders a campaign of 500 observables of 40 bins and
// reports the page size.
func BenchmarkHTML500(b *testing.B) {
	one := fixture(b)
	s := &Summary{Title: "large campaign"}
	for i := 0; i < 500; i++ {
		e := one.Entries[i%2]
		e.Observable = fmt.Sprintf("obs%03d", i)
		s.Entries = append(s.Entries, e)
	}
	var size int
	for b.Loop() {
		var buf bytes.Buffer
		if err := HTML(&buf, s, Style{}); err != nil {
			b.Fatal(err)
		}
		size = buf.Len()
	}
	b.ReportMetric(float64(size), "html-bytes")
}

// TestJSONHonestInfinities: an infinite pull is the string "+Inf" or
// "-Inf" (JSON has no infinity), never ±MaxFloat64, and an undefined value
// (the 0/0 pull of a bin with d = 0 and σ_d = 0) is null. Python's json
// module and float() (the outside reader scripts use) read them back as
// ±inf and None.
func TestJSONHonestInfinities(t *testing.T) {
	// bin 1: d = 2e300 over σ_d = 1.4e-10 overflows to +Inf; bin 2: an
	// ordinary pull; bin 3: d = -1 with σ_d = 0 is -Inf; bin 4: d = 0 with
	// σ_d = 0 has no pull.
	a := &table.Series{Column: "y", Lo: []float64{0, 1, 2, 3}, Hi: []float64{1, 2, 3, 4},
		V: []float64{1e300, 1, 1, 2}, Down: []float64{1e-10, 1, 0, 0}}
	b := &table.Series{Column: "y", Lo: a.Lo, Hi: a.Hi, V: []float64{-1e300, 1.5, 2, 2}, Down: []float64{1e-10, 1, 0, 0}}
	a.Up, b.Up = a.Down, b.Down
	r, err := compare.Series(a, b, compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := JSON(&buf, &Summary{Entries: []Entry{{Observable: "o", Result: r}}}, Style{}); err != nil {
		t.Fatalf("JSON with an infinite pull: %v", err)
	}
	out := buf.String()
	if strings.Contains(out, "1.7976931348623157e+308") {
		t.Error("an infinity is written as the largest float64")
	}
	for _, want := range []string{`"verdict": "fail"`, `"max_abs_pull": "+Inf"`, `"pulls": [
        "+Inf",
        -0.35355339059327373,
        "-Inf",
        null
      ]`} {
		if !strings.Contains(out, want) {
			t.Errorf("JSON lacks %s:\n%s", want, out)
		}
	}
	py, err := exec.LookPath("python3")
	if err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("python3 is required in CI but not installed")
		}
		t.Skip("skipping the Python read-back: python3 is not installed")
	}
	cmd := exec.Command(py, "-c", `import json, sys
d = json.load(sys.stdin)["observables"][0]
print(repr([None if p is None else float(p) for p in d["pulls"]]), repr(float(d["max_abs_pull"])))`)
	cmd.Stdin = strings.NewReader(out)
	got, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("python3: %v\n%s", err, got)
	}
	if want := "[inf, -0.35355339059327373, -inf, None] inf\n"; string(got) != want {
		t.Errorf("Python reads %q, want %q", got, want)
	}
}

// TestUndefinedSaysNA: what is undefined is null in JSON and n/a in text,
// Markdown and HTML, never a number that reads like a pass: every
// statistic when no bin carries a pull (ndf = 0; such a comparison fails
// its "comparable bins" check), the pull width with one pull.
func TestUndefinedSaysNA(t *testing.T) {
	series := func(v, e []float64) *table.Series {
		s := &table.Series{Column: "y", V: v, Down: e, Up: e}
		for i := range v {
			s.Lo, s.Hi = append(s.Lo, float64(i)), append(s.Hi, float64(i+1))
		}
		return s
	}
	// equal values and errors with ρ = 1: σ_d = 0 and d = 0 in every bin
	zero, err := compare.Series(series([]float64{5, 6}, []float64{0.5, 0.5}), series([]float64{5, 6}, []float64{0.5, 0.5}),
		compare.Options{Correlation: 1, Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	one, err := compare.Series(series([]float64{10}, []float64{1}), series([]float64{11}, []float64{1}), compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	if zero.Pass || zero.NDF != 0 {
		t.Fatalf("ndf-0 comparison: pass %v, ndf %d", zero.Pass, zero.NDF)
	}
	s := &Summary{Entries: []Entry{{Observable: "zero", Result: zero}}}
	for _, f := range []string{"text", "markdown", "html"} {
		var buf bytes.Buffer
		if err := Render(&buf, f, s, Style{}); err != nil {
			t.Fatal(err)
		}
		out := buf.String()
		for _, bad := range []string{"1.0000", "0/0", "NaN", "KS D = 0 "} {
			if strings.Contains(out, bad) {
				t.Errorf("%s: an ndf-0 comparison shows %q", f, bad)
			}
		}
		for _, want := range []string{"KS D = n/a (p = n/a)", "0 runs (p = n/a)", "χ²/ndf = n/a (ndf 0)"} {
			if !strings.Contains(out, want) {
				t.Errorf("%s: an ndf-0 comparison does not say %q", f, want)
			}
		}
	}
	var buf bytes.Buffer
	if err := JSON(&buf, &Summary{Entries: []Entry{{Observable: "zero", Result: zero}, {Observable: "one", Result: one}}}, Style{}); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Observables []map[string]any `json:"observables"`
	}
	if err := json.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	z, o := doc.Observables[0], doc.Observables[1]
	for _, k := range []string{"chi2", "p_value", "pull_mean", "pull_width", "pull_width_error", "max_abs_pull", "max_pull_bin",
		"max_pull_p_value", "ks_statistic", "ks_p_value", "runs_p_value"} {
		if v, ok := z[k]; !ok || v != nil {
			t.Errorf("ndf 0: %s = %v, want null", k, v)
		}
	}
	if ps := z["pulls"].([]any); len(ps) != 2 || ps[0] != nil || ps[1] != nil {
		t.Errorf("ndf 0: pulls %v, want [null, null]", ps)
	}
	for _, k := range []string{"pull_width", "pull_width_error", "pull_mean_error"} {
		if v, ok := o[k]; !ok || v != nil {
			t.Errorf("one bin: %s = %v, want null", k, v)
		}
	}
	for _, k := range []string{"chi2", "p_value", "ks_p_value", "pull_mean"} {
		if _, ok := o[k].(float64); !ok {
			t.Errorf("one bin: %s = %v, want a number", k, o[k])
		}
	}
}

// TestTextAlignsColouredPulls: the bold worst pull and the red FAIL do not
// shift their columns: every row of a table has the same visible width.
func TestTextAlignsColouredPulls(t *testing.T) {
	var buf bytes.Buffer
	if err := Text(&buf, fixture(t), Style{Color: true}); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(buf.String(), ansiBold) {
		t.Fatal("no bold pull in coloured output")
	}
	ansi := regexp.MustCompile("\x1b\\[[0-9;]*m")
	var table []string
	check := func() {
		for _, l := range table {
			if w := len([]rune(ansi.ReplaceAllString(l, ""))); w != len([]rune(ansi.ReplaceAllString(table[0], ""))) {
				t.Errorf("row %q is %d wide, header %d", l, w, len([]rune(table[0])))
			}
		}
		table = nil
	}
	for _, l := range strings.Split(buf.String(), "\n") {
		if strings.HasPrefix(strings.TrimSpace(l), "bin ") || len(table) > 0 && regexp.MustCompile(`^\s+\d+\s`).MatchString(l) {
			table = append(table, l)
			continue
		}
		check()
	}
	check()
}

// TestOneBinSaysNA: with one bin, the pull width and the error of the mean
// are undefined (the sample standard deviation needs n ≥ 2) and shown as
// n/a, not as 0 ± 0.
func TestOneBinSaysNA(t *testing.T) {
	a := &table.Series{Column: "y", Lo: []float64{0}, Hi: []float64{1}, V: []float64{10}, Down: []float64{1}}
	b := &table.Series{Column: "y", Lo: a.Lo, Hi: a.Hi, V: []float64{11}, Down: []float64{1}}
	a.Up, b.Up = a.Down, b.Down
	r, err := compare.Series(a, b, compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	s := &Summary{Entries: []Entry{{Observable: "one", Result: r}}}
	for _, f := range []string{"text", "markdown", "html"} {
		var buf bytes.Buffer
		if err := Render(&buf, f, s, Style{}); err != nil {
			t.Fatal(err)
		}
		if out := buf.String(); !strings.Contains(out, "width n/a") || strings.Contains(out, "width 0 ± 0") {
			t.Errorf("%s: one bin does not say the width is n/a", f)
		}
	}
}

func TestWithError(t *testing.T) {
	// two significant digits on the uncertainty, the value to the same place
	for _, c := range []struct {
		v, e         float64
		wantV, wantE string
	}{
		{100, 10, "100", "10"},
		{90, 9.48683, "90.0", "9.5"},
		{2415.3712, 48.95, "2415", "49"},
		{123456, 3456, "123500", "3500"},
		{0.012345, 0.00067, "0.01235", "0.00067"},
		{1.2345e7, 3.4e5, "1.234e+07", "3.4e+05"},
		{5, 0, "5", "0"},
	} {
		v, e := withError(c.v, c.e)
		if v != c.wantV || e != c.wantE {
			t.Errorf("withError(%v, %v) = %s ± %s, want %s ± %s", c.v, c.e, v, e, c.wantV, c.wantE)
		}
	}
}

// TestTickLabels: one format per axis: the same number of decimals on
// every label, a common ×10ⁿ factor for large or small numbers (never
// "1e+04" beside "8000"), and 10ⁿ on log axes.
func TestTickLabels(t *testing.T) {
	for _, c := range []struct {
		lo, hi   float64
		log      bool
		want     string
		wantMult string
	}{
		{0, 10000, false, "0.0 0.2 0.4 0.6 0.8 1.0", "×10⁴"},
		{0, 9000, false, "0 2000 4000 6000 8000", ""},
		{-4, 4, false, "−4 −2 0 2 4", ""},
		{0.9, 1.1, false, "0.90 0.95 1.00 1.05 1.10", ""},
		{0, 0.004, false, "0 1 2 3 4", "×10⁻³"},
		{1, 1e5, true, "10⁰ 10¹ 10² 10³ 10⁴ 10⁵", ""},
		{1e-3, 1e12, true, "10⁻³ 10⁻¹ 10¹ 10³ 10⁵ 10⁷ 10⁹ 10¹¹", ""},
	} {
		labels, mult := tickLabels(ticks(c.lo, c.hi, c.log), c.log)
		if got := strings.Join(labels, " "); got != c.want || mult != c.wantMult {
			t.Errorf("[%g, %g] log=%v: %q %q, want %q %q", c.lo, c.hi, c.log, got, mult, c.want, c.wantMult)
		}
	}
}

// TestAcceptedBesideVerdict: an accepted disagreement stands right after
// the verdict, in the same banner style and size, and is a structured
// field in JSON.
func TestAcceptedBesideVerdict(t *testing.T) {
	s := fixture(t)
	var buf bytes.Buffer
	if err := HTML(&buf, s, Style{}); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	v := strings.Index(page, `<p class="banner fail">Verdict:`)
	a := strings.Index(page, `<p class="banner accepted"><b>Disagreement accepted</b> by heron and otter: the tilt comes from a known alignment shift</p>`)
	if v < 0 || a < 0 || strings.Contains(page[v:a], "<h") {
		t.Errorf("accepted disagreement not right after the verdict (verdict at %d, accepted at %d)", v, a)
	}
	buf.Reset()
	if err := JSON(&buf, s, Style{}); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Accepted []struct {
			By     []string
			Reason string
		} `json:"accepted_disagreements"`
		Observables []struct {
			Name     string
			Accepted bool `json:"accepted_disagreement"`
		}
	}
	if err := json.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Accepted) != 1 || doc.Accepted[0].Reason == "" || len(doc.Accepted[0].By) != 2 {
		t.Errorf("accepted_disagreements = %+v", doc.Accepted)
	}
	for _, o := range doc.Observables {
		if o.Accepted != (o.Name == "tilt") {
			t.Errorf("%s: accepted_disagreement = %v", o.Name, o.Accepted)
		}
	}
}

// TestJUnitTableMode: without a campaign the suite is the pair of labels,
// not the title repeated.
func TestJUnitTableMode(t *testing.T) {
	s := fixture(t)
	s.Campaign, s.Title = "", "heron.csv vs otter.csv"
	for i := range s.Entries {
		s.Entries[i].Teams = [2]string{}
		s.Entries[i].LabelA, s.Entries[i].LabelB = "heron.csv", "otter.csv"
	}
	var buf bytes.Buffer
	if err := JUnit(&buf, s, Style{}); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(buf.String(), `<testsuite name="heron.csv vs otter.csv" tests="2"`) {
		t.Errorf("table-mode suite name:\n%s", buf.String())
	}
}

// TestRenderOddInputs: every format renders degenerate comparisons
// without panicking and the HTML stays finite: one bin, values of zero
// (no ratio), values spanning 10⁻³⁰⁰ to 10³⁰⁰, zero combined uncertainty
// with a difference (an infinite pull), negative values, 3000 bins.
func TestRenderOddInputs(t *testing.T) {
	mk := func(v, e []float64) *table.Series {
		n := len(v)
		s := &table.Series{Column: "y", Lo: make([]float64, n), Hi: make([]float64, n), V: v, Down: e, Up: e}
		for i := range v {
			s.Lo[i], s.Hi[i] = float64(i), float64(i+1)
		}
		return s
	}
	big := func(n int, f func(i int) float64) []float64 {
		out := make([]float64, n)
		for i := range out {
			out[i] = f(i)
		}
		return out
	}
	cases := []struct {
		name         string
		a, ea, b, eb []float64
	}{
		{"one bin", []float64{5}, []float64{1}, []float64{6}, []float64{1}},
		{"zeros", []float64{0, 0, 1}, []float64{1, 1, 1}, []float64{0, 1, 1}, []float64{1, 1, 1}},
		{"extremes", []float64{1e-300, 1e300, 1}, []float64{1e-301, 1e299, 1}, []float64{2e-300, 1e300, 2}, []float64{1e-301, 1e299, 1}},
		{"infinite pull", []float64{1, 2, 3}, []float64{0, 1, 1}, []float64{2, 2, 3}, []float64{0, 1, 1}},
		{"negative", []float64{-5, -3, 2, 400}, []float64{1, 1, 1, 1}, []float64{-4, -3, 2, 401}, []float64{1, 1, 1, 1}},
		{"3000 bins", big(3000, func(i int) float64 { return float64(i % 7) }), big(3000, func(int) float64 { return 1 }),
			big(3000, func(i int) float64 { return float64(i % 5) }), big(3000, func(int) float64 { return 1 })},
	}
	for _, c := range cases {
		r, err := compare.Series(mk(c.a, c.ea), mk(c.b, c.eb), compare.Options{Limits: compare.DefaultLimits})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		s := &Summary{Entries: []Entry{{Observable: c.name, Result: r}}}
		for _, f := range Formats {
			var buf bytes.Buffer
			if err := Render(&buf, f, s, Style{Color: true}); err != nil {
				t.Errorf("%s, %s: %v", c.name, f, err)
			}
			if f == "html" && regexp.MustCompile(`="[^"]*(NaN|Inf)`).Match(buf.Bytes()) {
				t.Errorf("%s: HTML has a NaN or Inf coordinate", c.name)
			}
			if f == "json" && !json.Valid(buf.Bytes()) {
				t.Errorf("%s: invalid JSON", c.name)
			}
		}
	}
}

// BenchmarkJSON1e6 writes the JSON report of one 10⁶-bin comparison (a
// pull and eight per-bin values for each bin); it reports the size.
//
//	go test -run '^$' -bench JSON1e6 -benchtime 5x ./report
func BenchmarkJSON1e6(b *testing.B) {
	const n = 1_000_000
	rng := rand.New(rand.NewPCG(3, 4))
	mk := func() *table.Series {
		s := &table.Series{Column: "y", Lo: make([]float64, n), Hi: make([]float64, n), V: make([]float64, n), Down: make([]float64, n)}
		for i := range s.V {
			s.Lo[i], s.Hi[i] = float64(i), float64(i+1)
			s.V[i], s.Down[i] = 1000+30*rng.NormFloat64(), 30
		}
		s.Up = s.Down
		return s
	}
	r, err := compare.Series(mk(), mk(), compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		b.Fatal(err)
	}
	s := &Summary{Entries: []Entry{{Observable: "big", Result: r}}}
	var size int
	for b.Loop() {
		var buf bytes.Buffer
		if err := JSON(&buf, s, Style{}); err != nil {
			b.Fatal(err)
		}
		size = buf.Len()
	}
	b.ReportMetric(float64(size), "json-bytes")
}

// TestFreeTextEscaped: names, labels, reasons and notes with an ANSI
// escape, a C1 control or a bidirectional override (Unicode Standard
// Annex #9: U+202E reverses what follows) reach no report raw. Text,
// Markdown, JUnit and HTML show them as \x1b, \u202e; JSON writes the \u
// escape, which decodes to the same string.
func TestFreeTextEscaped(t *testing.T) {
	s := fixture(t)
	s.Title = "ti\x1b[2Jtle"
	s.Notes = []string{"no\u202ete"}
	s.Accepted = []Acceptance{{By: []string{"he\u0085ron"}, Reason: "re\u2066ason\x07"}}
	s.Entries[1].Files = [2]string{"a\u202e.csv", "b.csv"}
	r := *s.Entries[1].Result
	r.Column, r.LabelA = "co\x1blumn", "x\u200fy"
	s.Entries[1].Result = &r
	bad := regexp.MustCompile("[\x00-\x08\x0b-\x1f\x7f\u0080-\u009f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069]")
	for _, f := range Formats {
		var buf bytes.Buffer
		if err := Render(&buf, f, s, Style{}); err != nil {
			t.Fatal(err)
		}
		out := buf.String()
		if m := bad.FindString(out); m != "" {
			t.Errorf("%s: raw %q in the report", f, m)
		}
		want := []string{`re\u2066ason\x07`}
		if f == "json" {
			want = []string{`re\u2066ason\u0007`, `no\u202ete`}
		}
		for _, w := range want {
			if !strings.Contains(out, w) {
				t.Errorf("%s: %s not shown escaped", f, w)
			}
		}
		if f == "json" {
			var doc struct {
				Notes []string `json:"notes"`
			}
			if err := json.Unmarshal(buf.Bytes(), &doc); err != nil || doc.Notes[0] != "no\u202ete" {
				t.Errorf("json: notes read back as %q (%v)", doc.Notes, err)
			}
		}
	}
	// the fixture itself is unchanged: the renderers work on a copy
	if s.Entries[1].Column != "co\x1blumn" || s.Title != "ti\x1b[2Jtle" {
		t.Error("rendering changed the summary")
	}
	if got := EscapeText("ok \xff \x1b \u202e é"); got != `ok \xff \x1b \u202e é` {
		t.Errorf("EscapeText = %q", got)
	}
}
