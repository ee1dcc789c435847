package rootfile

import (
	"bufio"
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"go-hep.org/x/hep/groot"
	"go-hep.org/x/hep/groot/rhist"
	"go-hep.org/x/hep/groot/root"
	"go-hep.org/x/hep/hbook"

	"tandem/compare"
	"tandem/compare/table"
)

// refill fills histograms from gauss-1d-data.dat as make-root-h1.py (both
// beside gauss-h1.root in go-hep's hbook/rootcnv/testdata) did
// with ROOT (TH1::Fill(x, w) with Sumw2), independently of any ROOT
// reader: bin k holds the x in [edge_k, edge_k+1); x below the first edge
// is underflow, x at or above the last edge is overflow.
//
// TH1F keeps its contents in single precision (TArrayF), so for it the
// weights are accumulated in float32, in file order, as ROOT did; the sums
// of squared weights are double (TArrayD) in both classes.
func refill(t *testing.T, edges []float64, single bool) (sumw, sumw2 []float64, under, over float64) {
	t.Helper()
	f, err := os.Open(gohep(t, gaussData))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	n := len(edges) - 1
	sumw, sumw2 = make([]float64, n), make([]float64, n)
	sumw32 := make([]float32, n)
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		parts := strings.Fields(sc.Text())
		if len(parts) != 2 {
			continue
		}
		x, _ := strconv.ParseFloat(parts[0], 64)
		w, _ := strconv.ParseFloat(parts[1], 64)
		switch {
		case x < edges[0]:
			under += w
		case x >= edges[n]:
			over += w
		default:
			k := 0
			for x >= edges[k+1] {
				k++
			}
			sumw[k] += w
			sumw32[k] += float32(w)
			sumw2[k] += w * w
		}
	}
	if single {
		for k := range sumw {
			sumw[k] = float64(sumw32[k])
		}
	}
	return
}

// TestROOTWrittenHistograms checks TH1D and TH1F objects written by ROOT
// itself against a refill of the data their producer script used.
func TestROOTWrittenHistograms(t *testing.T) {
	fixed := make([]float64, 11)
	for i := range fixed {
		fixed[i] = -4 + 0.8*float64(i)
	}
	variable := []float64{-4.0, -3.2, -2.4, -1.6, -0.8, 0, +0.8, +1.6, +2.4, +3.2, +4.0}
	for _, c := range []struct {
		name   string
		edges  []float64
		single bool // a TH1F
		rel    float64
	}{
		{"h1d", fixed, false, 1e-12}, {"h1f", fixed, true, 1e-12}, {"h1d-var", variable, true, 1e-12}, {"h1f-var", variable, true, 1e-12},
	} {
		tb, err := Read(gohep(t, gaussH1) + ":" + c.name)
		if err != nil {
			t.Fatal(err)
		}
		sumw, sumw2, under, over := refill(t, c.edges, c.single)
		if tb.Len() != 10 {
			t.Fatalf("%s: %d bins", c.name, tb.Len())
		}
		for i := 0; i < 10; i++ {
			if math.Abs(tb.Lo[i]-c.edges[i]) > 1e-6 || math.Abs(tb.Hi[i]-c.edges[i+1]) > 1e-6 {
				t.Errorf("%s bin %d: [%v, %v], want [%v, %v]", c.name, i, tb.Lo[i], tb.Hi[i], c.edges[i], c.edges[i+1])
			}
			if v := tb.Column(Value)[i]; math.Abs(v-sumw[i]) > c.rel*sumw[i] {
				t.Errorf("%s bin %d: content %v, refill %v", c.name, i, v, sumw[i])
			}
			if e := tb.Column(Err)[i]; math.Abs(e-math.Sqrt(sumw2[i])) > c.rel*math.Sqrt(sumw2[i]) {
				t.Errorf("%s bin %d: error %v, refill √Σw² = %v", c.name, i, e, math.Sqrt(sumw2[i]))
			}
		}
		if len(tb.Notes) != 1 || !strings.Contains(tb.Notes[0], "underflow "+table.Format(round(under))) {
			t.Errorf("%s: notes %v, want underflow %v overflow %v", c.name, tb.Notes, under, over)
		}
	}
}

func round(v float64) float64 { return math.Round(v*1e6) / 1e6 }

// TestROOTWrittenGraphs checks graphs written by ROOT against go-hep's
// recorded values (groot/rhist/graph_test.go and the rootcnv ExampleS2D
// output): point i (v = i+1) is x = v, y = 2v; TGraphErrors has x error
// 0.1v and y error 0.2v; TGraphAsymmErrors has x errors (0.1v, 0.2v) and
// y errors (0.3v, 0.4v).
func TestROOTWrittenGraphs(t *testing.T) {
	tge, err := Read(gohep(t, graphs) + ":tge")
	if err != nil {
		t.Fatal(err)
	}
	tgae, err := Read(gohep(t, graphs) + ":tgae")
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 4; i++ {
		v := float64(i + 1)
		if tge.Lo[i] != v-0.1*v || tge.Hi[i] != v+0.1*v || tge.Column(Value)[i] != 2*v || tge.Column(Err)[i] != 0.2*v {
			t.Errorf("tge point %d: [%v,%v] %v ± %v", i, tge.Lo[i], tge.Hi[i], tge.Column(Value)[i], tge.Column(Err)[i])
		}
		if tgae.Lo[i] != v-0.1*v || tgae.Hi[i] != v+0.2*v || tgae.Column(Value)[i] != 2*v ||
			tgae.Column(ErrMinus)[i] != 0.3*v || tgae.Column(ErrPlus)[i] != 0.4*v {
			t.Errorf("tgae point %d: [%v,%v] %v -%v +%v", i, tgae.Lo[i], tgae.Hi[i], tgae.Column(Value)[i], tgae.Column(ErrMinus)[i], tgae.Column(ErrPlus)[i])
		}
	}
	if _, err := Read(gohep(t, graphs) + ":tg"); err == nil || !strings.Contains(err.Error(), "TGraph without errors") {
		t.Errorf("plain TGraph: %v", err)
	}
}

func TestNestedPath(t *testing.T) {
	tb, err := Read(gohep(t, dirs) + ":dir1/dir11/h1")
	if err != nil {
		t.Fatal(err)
	}
	if tb.Len() == 0 || tb.Names[0] != Value {
		t.Errorf("dir1/dir11/h1: %+v", tb)
	}
	// the only object in the file is found without a path
	if only, err := Read(gohep(t, dirs)); err != nil || only.Len() != tb.Len() {
		t.Errorf("single object: %v", err)
	}
	if _, err := Read(gohep(t, gaussH1)); err == nil || !strings.Contains(err.Error(), "name one") {
		t.Errorf("ambiguous file: %v", err)
	}
}

// TestRoundTrip writes histograms and graphs with groot and reads them back.
func TestRoundTrip(t *testing.T) {
	path := filepath.Join(t.TempDir(), "rt.root")
	f, err := groot.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	h := hbook.NewH1DFromEdges([]float64{0, 1, 2.5, 4, 10})
	for i, x := range []float64{0.5, 0.7, 1.2, 3.9, 5, 9.99, 9.5, -1, 11} {
		h.Fill(x, 1+0.25*float64(i))
	}
	g := hbook.NewS2D(
		hbook.Point2D{X: 1, Y: 10, ErrX: hbook.Range{Min: 0.5, Max: 0.5}, ErrY: hbook.Range{Min: 1, Max: 2}},
		hbook.Point2D{X: 2, Y: 12, ErrX: hbook.Range{Min: 0.5, Max: 0.5}, ErrY: hbook.Range{Min: 1.5, Max: 1}},
	)
	h2 := hbook.NewH2D(2, 0, 1, 2, 0, 1)
	for name, obj := range map[string]root.Object{
		"h": rhist.NewH1DFrom(h), "g": rhist.NewGraphAsymmErrorsFrom(g), "h2": rhist.NewH2DFrom(h2),
	} {
		if err := f.Put(name, obj); err != nil {
			t.Fatal(err)
		}
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	got, err := Read(path + ":h")
	if err != nil {
		t.Fatal(err)
	}
	want := &table.Table{Source: path + ":h", LoName: "lo", HiName: "hi",
		Lo: []float64{0, 1, 2.5, 4}, Hi: []float64{1, 2.5, 4, 10}, Names: []string{Value, Err}}
	var vals, errs []float64
	for _, b := range h.Binning.Bins {
		vals, errs = append(vals, b.SumW()), append(errs, math.Sqrt(b.SumW2()))
	}
	want.Cols = [][]float64{vals, errs}
	if diff := cmp.Diff(want, got, cmp.FilterPath(func(p cmp.Path) bool { return p.Last().String() == ".Notes" }, cmp.Ignore())); diff != "" {
		t.Errorf("histogram round trip (-want +got):\n%s", diff)
	}
	if len(got.Notes) != 1 {
		t.Errorf("under/overflow not reported: %v", got.Notes)
	}
	gg, err := Read(path + ":g")
	if err != nil {
		t.Fatal(err)
	}
	wantG := &table.Table{Source: path + ":g", LoName: "lo", HiName: "hi", Lo: []float64{0.5, 1.5}, Hi: []float64{1.5, 2.5},
		Names: []string{Value, ErrMinus, ErrPlus}, Cols: [][]float64{{10, 12}, {1, 1.5}, {2, 1}}}
	if diff := cmp.Diff(wantG, gg); diff != "" {
		t.Errorf("graph round trip (-want +got):\n%s", diff)
	}
	// A 2-D histogram is read as cells (twod_test.go checks the values).
	if t2, err := Read(path + ":h2"); err != nil || !t2.Is2D() || t2.Len() != 4 {
		t.Errorf("2-D histogram: %v", err)
	}
	// A missing object: the message lists what the file holds, not the
	// library's text.
	_, err = Read(path + ":nothing")
	if e, ok := err.(*table.Error); !ok || e.Error() != path+`: no object "nothing" in the file; it holds g (TGraphAsymmErrors), h (TH1D), h2 (TH2D)` || !strings.Contains(e.Hint, path+":PATH") {
		t.Errorf("missing object: %v", err)
	}
	// A file with a 2-D histogram only names it.
	only2 := filepath.Join(t.TempDir(), "h2.root")
	f2, err := groot.Create(only2)
	if err != nil {
		t.Fatal(err)
	}
	if err := f2.Put("map", rhist.NewH2DFrom(h2)); err != nil {
		t.Fatal(err)
	}
	if err := f2.Close(); err != nil {
		t.Fatal(err)
	}
	if t2, err := Read(only2); err != nil || !t2.Is2D() {
		t.Errorf("file of one 2-D histogram: %v", err)
	}
}

func TestBadFiles(t *testing.T) {
	tmp := t.TempDir()
	notRoot := filepath.Join(tmp, "x.root")
	os.WriteFile(notRoot, []byte("lo,hi,y\n0,1,2\n"), 0o644)
	if _, err := Read(notRoot + ":h"); err == nil || !strings.Contains(err.Error(), "not a readable ROOT file") {
		t.Errorf("non-ROOT: %v", err)
	}
	data, _ := os.ReadFile(gohep(t, gaussH1))
	for _, cut := range []int{100, len(data) / 2, len(data) - 10} {
		p := filepath.Join(tmp, "trunc.root")
		os.WriteFile(p, data[:cut], 0o644)
		if _, err := Read(p + ":h1d"); err == nil {
			t.Errorf("truncated at %d accepted", cut)
		}
	}
	if _, err := Read(filepath.Join(tmp, "missing.root:h")); err == nil || !strings.Contains(err.Error(), "no such file") {
		t.Errorf("missing file: %v", err)
	}
}

// TestSameJSONAsCSV: comparing two ROOT histograms gives the same JSON as
// comparing the same tables written as CSV.
func TestSameJSONAsCSV(t *testing.T) {
	a, err := Read(gohep(t, gaussH1) + ":h1d")
	if err != nil {
		t.Fatal(err)
	}
	b, err := Read(gohep(t, gaussH1) + ":h1f")
	if err != nil {
		t.Fatal(err)
	}
	render := func(a, b *table.Table) string {
		rs, err := compare.Tables(a, b, table.DefaultSelections(a), 1e-9, compare.Options{Limits: compare.DefaultLimits})
		if err != nil {
			t.Fatal(err)
		}
		// The results as JSON (encoding/json): every statistic the
		// reports print comes from these fields. The side labels name
		// the sources, which differ by construction.
		for _, r := range rs {
			r.LabelA, r.LabelB = "", ""
		}
		out, err := json.Marshal(rs)
		if err != nil {
			t.Fatal(err)
		}
		return string(out)
	}
	viaCSV := func(t0 *table.Table) *table.Table {
		var buf bytes.Buffer
		t0.WriteCSV(&buf)
		tt, err := table.ParseCSV("csv", buf.Bytes(), table.CSVOptions{})
		if err != nil {
			t.Fatal(err)
		}
		return tt
	}
	if diff := cmp.Diff(render(a, b), render(viaCSV(a), viaCSV(b))); diff != "" {
		t.Errorf("ROOT and CSV give different JSON:\n%s", diff)
	}
}

// FuzzRead: the ROOT reader survives corrupted and truncated versions of a
// valid file: every outcome is a table or a *table.Error, never a panic or
// a runtime crash. The seeds are ROOT files written by groot for this
// repository (testdata/seeds, see TestWriteSeeds).
func FuzzRead(f *testing.F) {
	for _, data := range seedFiles(f) {
		f.Add(data, uint16(0), byte(0))
	}
	f.Fuzz(func(t *testing.T, data []byte, at uint16, flip byte) {
		if len(data) > 0 {
			data = append([]byte(nil), data...)
			data[int(at)%len(data)] ^= flip
		}
		p := filepath.Join(t.TempDir(), "f.root")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		for _, obj := range []string{":h", ":g", ":h2", ""} {
			if _, err := Read(p + obj); err != nil {
				mustBeInputError(t, err)
			}
		}
	})
}
