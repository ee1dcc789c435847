package report

import (
	"bytes"
	"encoding/json"
	"html"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"tandem/compare"
)

// screenScript, added to a copy of the page by the test only, measures the
// first screen: where the verdict banner and the table of key numbers end,
// where the first note starts, and the smallest font of the page's text.
const screenScript = `<script>
(function () {
  function bottom(sel) { var e = document.querySelector(sel); return e ? e.getBoundingClientRect().bottom : -1; }
  function top(sel) { var e = document.querySelector(sel); return e ? e.getBoundingClientRect().top : -1; }
  var minPx = 1e9;
  document.querySelectorAll('p, td, th, li, h1, h2').forEach(function (e) {
    if (e.offsetParent === null) return;
    minPx = Math.min(minPx, parseFloat(getComputedStyle(e).fontSize));
  });
  var out = {banner: bottom('.banner'), keys: bottom('table.keys'), note: top('p.note:not(.warn)'),
    ratios: document.querySelectorAll('svg.ratio').length, minPx: minPx, width: document.documentElement.scrollWidth};
  var pre = document.createElement('pre');
  pre.id = 'screen';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>`

// TestFirstScreenInChromium projects a blinded campaign page that is not
// complete and a table-mode page with long file names at 1280×720, as a
// meeting room shows them: the verdict and the key numbers are on the
// first screen, before the notes; no ratio panel is drawn on blinded
// values; text is at least 14 px; nothing is wider than the screen.
// TANDEM_SCREENSHOTS=DIR keeps the screenshots for a person to look at.
func TestFirstScreenInChromium(t *testing.T) {
	bin := chromium(t)
	campaign := incompleteFixture(t)
	rng := rand.New(rand.NewPCG(5, 720))
	a, b := benchSeries(rng, 60)
	r, err := compare.Series(a, b, compare.Options{Correlation: 0.5, Limits: compare.DefaultLimits})
	if err != nil {
		t.Fatal(err)
	}
	long := [2]string{"/data/analysis/heron/reprocessing-2026-11/muon-rate/final/spectrum_heron_v3.csv", "/data/analysis/otter/reprocessing-2026-11/muon-rate/final/spectrum_otter_v3.csv"}
	r.LabelA, r.LabelB = long[0], long[1]
	tableMode := &Summary{Title: long[0] + " vs " + long[1], Entries: []Entry{{Observable: "spectrum", Files: long, XLabel: "energy [GeV]", YLabel: "rate [Hz]", Result: r}}}
	for _, c := range []struct {
		name   string
		s      *Summary
		ratios int
	}{
		{"campaign", campaign, len(campaign.Entries) - blindedEntries(campaign)},
		{"table", tableMode, 1},
	} {
		dir := t.TempDir()
		var buf bytes.Buffer
		if err := Render(&buf, "html", c.s, Style{Stamp: testStamp()}); err != nil {
			t.Fatal(err)
		}
		page := filepath.Join(dir, "page.html")
		os.WriteFile(page, buf.Bytes(), 0o644)
		measured := filepath.Join(dir, "measured.html")
		os.WriteFile(measured, bytes.Replace(buf.Bytes(), []byte("</body>"), []byte(screenScript+"</body>"), 1), 0o644)
		args := chromiumArgs(dir, 1280)
		args[len(args)-1] = "--window-size=1280,720"
		dom, err := exec.Command(bin, append(args, "--dump-dom", "file://"+measured)...).Output()
		if err != nil {
			t.Fatalf("%s: chromium --dump-dom: %v", c.name, err)
		}
		js, ok := strings.CutPrefix(regexp.MustCompile(`<pre id="screen">[^<]*`).FindString(string(dom)), `<pre id="screen">`)
		var m struct {
			Banner, Keys, Note, MinPx float64
			Ratios, Width             int
		}
		if !ok || json.Unmarshal([]byte(html.UnescapeString(js)), &m) != nil {
			t.Fatalf("%s: no measurement in the DOM", c.name)
		}
		t.Logf("%s at 1280×720: banner ends at %.0f px, key numbers at %.0f px, first note at %.0f px, smallest text %.1f px, page %d px wide",
			c.name, m.Banner, m.Keys, m.Note, m.MinPx, m.Width)
		if m.Banner <= 0 || m.Banner > 720 || m.Keys <= 0 || m.Keys > 720 {
			t.Errorf("%s: the verdict (ends at %.0f px) and the key numbers (%.0f px) are not on the first screen of 720 px", c.name, m.Banner, m.Keys)
		}
		if m.Note >= 0 && m.Note < m.Keys {
			t.Errorf("%s: a note (at %.0f px) comes before the key numbers (end at %.0f px)", c.name, m.Note, m.Keys)
		}
		if m.Ratios != c.ratios {
			t.Errorf("%s: %d ratio panels, want %d (none on blinded values)", c.name, m.Ratios, c.ratios)
		}
		if m.MinPx < 14 {
			t.Errorf("%s: text of %.1f px is too small to read when projected", c.name, m.MinPx)
		}
		if m.Width > 1280 {
			t.Errorf("%s: the page is %d px wide, wider than the screen", c.name, m.Width)
		}
		if d := os.Getenv("TANDEM_SCREENSHOTS"); d != "" {
			shot, _ := filepath.Abs(filepath.Join(d, c.name+"-1280x720.png"))
			if out, err := exec.Command(bin, append(args, "--screenshot="+shot, "file://"+page)...).CombinedOutput(); err != nil {
				t.Errorf("screenshot: %v\n%s", err, out)
			}
		}
	}
}
