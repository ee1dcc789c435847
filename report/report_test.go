package report

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"flag"
	"fmt"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"tandem/compare"
	"tandem/compare/table"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/golden")

// fixture builds a small deterministic summary: one agreeing and one
// disagreeing comparison of hand-written tables.
func fixture(t testing.TB) *compare.Summary {
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
	return &compare.Summary{
		Title: "golden campaign",
		Notes: []string{"campaign golden is blinded"},
		Entries: []compare.Entry{
			{Observable: "spectrum", Teams: [2]string{"heron", "otter"}, XLabel: "energy [GeV]", YLabel: "rate [Hz]", Blinded: true, Result: good},
			{Observable: "tilt", Teams: [2]string{"heron", "otter"}, XLabel: "cos θ", Result: bad},
		},
	}
}

// TestGolden compares the Markdown, JUnit and text renderings with the
// files in testdata/golden; run with -update to rewrite them after an
// intended change, and review the diff.
func TestGolden(t *testing.T) {
	s := fixture(t)
	for _, c := range []struct{ format, file, reason string }{
		{"markdown", "summary.md", "paste-ready Markdown for meeting pages"},
		{"junit", "summary.junit.xml", "CI systems read these test cases"},
		{"text", "summary.txt", "the default terminal output, without colour"},
	} {
		var buf bytes.Buffer
		if err := Render(&buf, c.format, s, Style{}); err != nil {
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

// TestJUnitShape checks the usual JUnit XML shape CI systems expect
// (common practice, as consumed by Jenkins/GitLab: testsuites > testsuite >
// testcase, failures as <failure message=...> children, counts that add up).
func TestJUnitShape(t *testing.T) {
	var buf bytes.Buffer
	if err := JUnit(&buf, fixture(t)); err != nil {
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
	if err := JSON(&buf, fixture(t)); err != nil {
		t.Fatal(err)
	}
	var doc map[string]any
	if err := json.Unmarshal(buf.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if doc["verdict"] != "fail" {
		t.Errorf("verdict %v", doc["verdict"])
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
	}
}

func TestHTMLEscapesAndNoTrueValuesWhenBlinded(t *testing.T) {
	s := fixture(t)
	s.Entries[0].Observable = "<script>alert(1)</script>"
	var buf bytes.Buffer
	if err := HTML(&buf, s); err != nil {
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
	if got := strings.Count(out, "<svg"); got != 3*len(s.Entries) {
		t.Errorf("%d figures, want %d", got, 3*len(s.Entries))
	}
}

// TestHTMLInChromium renders the report in headless Chromium (Debian's
// chromium package), checks the screenshot is not blank and that the
// browser built every figure.
func TestHTMLInChromium(t *testing.T) {
	bin := ""
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			bin = p
			break
		}
	}
	if bin == "" {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("chromium is required in CI but not installed")
		}
		t.Skip("skipping: chromium is not installed (apt-get install chromium)")
	}
	dir := t.TempDir()
	page := filepath.Join(dir, "report.html")
	var buf bytes.Buffer
	s := fixture(t)
	if err := HTML(&buf, s); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(page, buf.Bytes(), 0o644)
	args := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir=" + filepath.Join(dir, "profile"), "--window-size=1100,1400"}
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
	for _, e := range s.Entries {
		for _, label := range []string{"values of heron and otter", "pulls per bin", "pull distribution"} {
			_ = e
			if !strings.Contains(string(dom), fmt.Sprintf(`aria-label="%s"`, label)) {
				t.Errorf("figure %q missing from the rendered DOM", label)
			}
		}
	}
	if got := strings.Count(string(dom), "<svg"); got != 3*len(s.Entries) {
		t.Errorf("browser DOM has %d figures, want %d", got, 3*len(s.Entries))
	}
}

// BenchmarkHTML500 renders a campaign of 500 observables of 40 bins and
// reports the page size.
func BenchmarkHTML500(b *testing.B) {
	one := fixture(b)
	s := &compare.Summary{Title: "large campaign"}
	for i := 0; i < 500; i++ {
		e := one.Entries[i%2]
		e.Observable = fmt.Sprintf("obs%03d", i)
		s.Entries = append(s.Entries, e)
	}
	var size int
	for b.Loop() {
		var buf bytes.Buffer
		if err := HTML(&buf, s); err != nil {
			b.Fatal(err)
		}
		size = buf.Len()
	}
	b.ReportMetric(float64(size), "html-bytes")
}

func TestJSONSurvivesOverflow(t *testing.T) {
	a := &table.Series{Column: "y", Lo: []float64{0, 1}, Hi: []float64{1, 2}, V: []float64{1e300, 1}, Down: []float64{1e-10, 1}}
	b := &table.Series{Column: "y", Lo: a.Lo, Hi: a.Hi, V: []float64{-1e300, 1}, Down: []float64{1e-10, 1}}
	a.Up, b.Up = a.Down, b.Down
	r, err := compare.Series(a, b, compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := JSON(&buf, &compare.Summary{Entries: []compare.Entry{{Observable: "o", Result: r}}}); err != nil {
		t.Fatalf("JSON with an infinite pull: %v", err)
	}
	if !strings.Contains(buf.String(), `"verdict": "fail"`) {
		t.Errorf("verdict lost:\n%s", buf.String())
	}
}
