package report

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"tandem/compare"
	"tandem/compare/table"
)

// teamsFixture is a summary of three teams where team "kite" sits 1.5σ
// above the others in every bin, with one label that needs escaping
// when asked.
func teamsFixture(t testing.TB, odd string) *Summary {
	t.Helper()
	labels := []string{"heron", "otter", "kite"}
	if odd != "" {
		labels[1] = odd
	}
	// fixed values (no random numbers): deviations of ±1σ-ish that
	// alternate, and kite's shift
	dev := [][]float64{{0.3, -0.8, 0.5, 1.1, -0.2, 0.4, -1.0, 0.6}, {-0.5, 0.9, -0.1, -0.7, 0.8, -0.3, 0.2, -0.9}, {0.1, 0.4, -0.6, 0.2, 0.5, -0.4, 0.7, 0.0}}
	var tabs []*table.Table
	for k := range 3 {
		var b strings.Builder
		b.WriteString("lo,hi,rate,stat,syst\n")
		for i, d := range dev[k] {
			v := 100 - 5*float64(i) + 1.2*d
			if k == 2 {
				v += 1.5 * math.Hypot(1, 0.6)
			}
			fmt.Fprintf(&b, "%d,%d,%g,1,0.6\n", i, i+1, v)
		}
		tab, err := table.ParseCSV(labels[k]+".csv", []byte(b.String()), table.CSVOptions{Lo: "lo", Hi: "hi"})
		if err != nil {
			t.Fatal(err)
		}
		tabs = append(tabs, tab)
	}
	opt := compare.Defaults()
	opt.Correlations = map[string]compare.Rho{"syst": compare.Number(0.5)}
	tc, err := compare.Teams(tabs, labels, "spectrum", []compare.Selection{{Value: "rate", Errors: []string{"stat", "syst"}}}, opt)
	if err != nil {
		t.Fatal(err)
	}
	s := &Summary{Title: strings.Join(labels, " vs "), Teams: tc.Results}
	for _, p := range tc.Pairs {
		s.Entries = append(s.Entries, Entry{Observable: p.Observable, Teams: [2]string{labels[p.I], labels[p.J]},
			Files: [2]string{tabs[p.I].Source, tabs[p.J].Source}, Result: p.Result})
	}
	return s
}

// teamsEncoded is the "teams" member of the JSON document as
// encoding/json writes it (indented as in the document, behind a
// [jsonEscaper]).
func teamsEncoded(t testing.TB, s *Summary) string {
	t.Helper()
	b, err := json.MarshalIndent(jsonTeamsValue(s), "  ", "  ")
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if _, err := (jsonEscaper{&out}).Write(b); err != nil {
		t.Fatal(err)
	}
	return "\n  \"teams\": " + out.String() + ",\n  \"observables\": "
}

// TestTeamsWritersMatchEncoding: the hand-written JSON and JUnit of an
// N-team summary are byte for byte what encoding/json and encoding/xml
// write, also with a label that holds controls and XML specials.
func TestTeamsWritersMatchEncoding(t *testing.T) {
	for _, odd := range []string{"", "ot\x1bter <&> ]]> \u202e"} {
		s := teamsFixture(t, odd)
		var got bytes.Buffer
		if err := Render(&got, "json", s, Style{}); err != nil {
			t.Fatal(err)
		}
		if want := teamsEncoded(t, s); !strings.Contains(got.String(), want) {
			t.Errorf("label %q: the teams list differs from encoding/json:\n got %s\nwant %s", odd, got.Bytes(), want)
		}
		checkJUnit(t, "teams "+odd, s)
	}
}

// TestTeamsReports: every format names the departing team and holds the
// N-team statistics; HTML draws one overlay of all teams; free text is
// escaped.
func TestTeamsReports(t *testing.T) {
	s := teamsFixture(t, "")
	if s.Pass() || len(s.Teams[0].Departs) == 0 || s.Teams[0].Departs[0] != "kite" {
		t.Fatalf("fixture: pass %v, departs %v; want kite to fail", s.Pass(), s.Teams[0].Departs)
	}
	out := map[string]string{}
	for _, f := range Formats {
		var b bytes.Buffer
		if err := Render(&b, f, s, Style{}); err != nil {
			t.Fatal(err)
		}
		out[f] = b.String()
	}
	for _, f := range []string{"text", "markdown", "junit", "html"} {
		if !strings.Contains(strings.ToLower(out[f]), "departing team: kite") {
			t.Errorf("%s: no departing team", f)
		}
		if !strings.Contains(out[f], "leave-one-out shift p-value") {
			t.Errorf("%s: no leave-one-out criteria", f)
		}
	}
	var doc struct {
		Verdict string `json:"verdict"`
		Teams   []struct {
			Departing   string `json:"departing"`
			NDF         int    `json:"ndf"`
			LeaveOneOut []struct {
				Team   string `json:"team"`
				ShiftZ float64
			} `json:"leave_one_out"`
		} `json:"teams"`
		Observables []struct {
			Teams []string `json:"teams"`
		} `json:"observables"`
	}
	if err := json.Unmarshal([]byte(out["json"]), &doc); err != nil {
		t.Fatal(err)
	}
	if doc.Verdict != "fail" || len(doc.Teams) != 1 || doc.Teams[0].Departing != "kite" || doc.Teams[0].NDF != 16 ||
		len(doc.Teams[0].LeaveOneOut) != 3 || len(doc.Observables) != 3 || len(doc.Observables[0].Teams) != 2 {
		t.Fatalf("JSON: %+v", doc)
	}
	h := out["html"]
	if n := strings.Count(h, `aria-label="values of all teams"`); n != 1 {
		t.Errorf("HTML: %d overlays of all teams, want 1", n)
	}
	// 8 bins × 3 teams markers in the overlay and in the pulls panel
	overlay := h[strings.Index(h, `aria-label="values of all teams"`):]
	overlay = overlay[:strings.Index(overlay, "</svg>")]
	if n := strings.Count(overlay, "<circle") + strings.Count(overlay, "<rect x") + strings.Count(overlay, `z" fill="#`); n < 24 {
		t.Errorf("HTML overlay has %d markers, want at least 24", n)
	}
	odd := teamsFixture(t, "ot\x1bter")
	for _, f := range []string{"text", "markdown", "html", "junit"} {
		var b bytes.Buffer
		if err := Render(&b, f, odd, Style{}); err != nil {
			t.Fatal(err)
		}
		if strings.Contains(b.String(), "\x1b") {
			t.Errorf("%s: an escape character reached the report", f)
		}
	}
}

// TestTeamsGolden holds the text and Markdown reports of the fixture to
// files in testdata/golden (rewrite with go test ./report -update).
func TestTeamsGolden(t *testing.T) {
	s := teamsFixture(t, "")
	for _, c := range []struct{ file, format string }{{"teams.txt", "text"}, {"teams.md", "markdown"}} {
		var b bytes.Buffer
		if err := Render(&b, c.format, s, Style{}); err != nil {
			t.Fatal(err)
		}
		path := filepath.Join("testdata", "golden", c.file)
		if *update {
			if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(path)
		if err != nil {
			t.Fatalf("%v (run go test ./report -update)", err)
		}
		if !bytes.Equal(b.Bytes(), want) {
			t.Errorf("%s differs from %s (run go test ./report -update and review the diff)", c.format, path)
		}
	}
}

// FuzzTeamsWriters holds the N-team JSON and JUnit writers to
// encoding/json and encoding/xml for any team label, and checks that the
// text, Markdown and HTML reports let no control character through.
func FuzzTeamsWriters(f *testing.F) {
	f.Add("otter")
	f.Add("ot\x1bter <&> ]]> \u202e")
	f.Add("\xff\x00\u2028\"\\")
	f.Fuzz(func(t *testing.T, label string) {
		if label == "" || label == "heron" || label == "kite" {
			return // Teams refuses no label itself; the command line does
		}
		s := teamsFixture(t, label)
		var got bytes.Buffer
		if err := Render(&got, "json", s, Style{}); err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(got.String(), teamsEncoded(t, s)) {
			t.Fatalf("the teams list differs from encoding/json for label %q", label)
		}
		checkJUnit(t, "fuzz", s)
		for _, f := range []string{"text", "markdown", "html"} {
			var b bytes.Buffer
			if err := Render(&b, f, s, Style{}); err != nil {
				t.Fatal(err)
			}
			if strings.ContainsRune(b.String(), '\x1b') {
				t.Fatalf("%s: an escape character reached the report", f)
			}
		}
	})
}

// TestTeamsHTMLFigures: the N-team figures are well-formed XML (checked
// with encoding/xml) and headless Chromium (Debian's chromium) builds
// them into the page's DOM.
func TestTeamsHTMLFigures(t *testing.T) {
	var buf bytes.Buffer
	if err := Render(&buf, "html", teamsFixture(t, ""), Style{}); err != nil {
		t.Fatal(err)
	}
	h := buf.String()
	for _, label := range []string{"values of all teams", "leave-one-out pulls of every team"} {
		i := strings.Index(h, `aria-label="`+label+`"`)
		if i < 0 {
			t.Fatalf("no figure %q", label)
		}
		start := strings.LastIndex(h[:i], "<svg")
		end := i + strings.Index(h[i:], "</svg>") + len("</svg>")
		d := xml.NewDecoder(strings.NewReader(h[start:end]))
		for {
			_, err := d.Token()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("figure %q is not well-formed XML: %v", label, err)
			}
		}
	}
	bin := chromium(t)
	dir := t.TempDir()
	page := filepath.Join(dir, "teams.html")
	if err := os.WriteFile(page, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	dom, err := exec.Command(bin, append(chromiumArgs(dir, 1100), "--dump-dom", "file://"+page)...).Output()
	if err != nil {
		t.Fatalf("chromium --dump-dom: %v", err)
	}
	for _, label := range []string{"values of all teams", "leave-one-out pulls of every team"} {
		if !bytes.Contains(dom, []byte(`aria-label="`+label+`"`)) {
			t.Errorf("Chromium's DOM has no figure %q", label)
		}
	}
	if n := bytes.Count(dom, []byte("<circle")); n < 16 {
		t.Errorf("Chromium's DOM has %d circles, want at least 16 (heron's markers in both figures)", n)
	}
}
