package rootfile

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"go-hep.org/x/hep/groot"
	"go-hep.org/x/hep/groot/rhist"
	"go-hep.org/x/hep/hbook"

	"tandem/compare"
	"tandem/compare/table"
)

// needPython returns Debian's python3 with numpy, skipping the test when it
// is missing (failing under TANDEM_REQUIRE_TOOLS=1, set by .ci/run).
func needPython(t *testing.T) string {
	t.Helper()
	py, err := exec.LookPath("/usr/bin/python3")
	if err == nil {
		err = exec.Command(py, "-c", "import numpy, scipy").Run()
	}
	if err != nil {
		msg := "python3 with numpy and scipy is not available (apt-get install python3-numpy python3-scipy): " + err.Error()
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal(msg)
		}
		t.Skip(msg)
	}
	return py
}

// runPython runs script with args and decodes its JSON output into v.
func runPython(t *testing.T, script string, v any, args ...string) {
	t.Helper()
	out, err := exec.Command(needPython(t), append([]string{"-c", script}, args...)...).Output()
	if err != nil {
		if ee, ok := err.(*exec.ExitError); ok {
			t.Fatalf("python: %v\n%s", err, ee.Stderr)
		}
		t.Fatal(err)
	}
	if err := json.Unmarshal(out, v); err != nil {
		t.Fatalf("python output %q: %v", out, err)
	}
}

// numpy's histogram2d of the (x, y, w) rows of go-hep's
// gauss-2d-data.dat, the data that go-hep's make-root-h2.py filled into
// the TH2s of gauss-h2.root with ROOT: Σw and √Σw² per cell, y rows
// outer and x inner (the order tandem reads cells in).
const histScript = `
import json, sys, numpy as np
d = np.loadtxt(sys.argv[1])
xe = [float(e) for e in sys.argv[2].split(",")]
ye = [float(e) for e in sys.argv[-1].split(",")]
sw, _, _ = np.histogram2d(d[:,0], d[:,1], bins=[xe, ye], weights=d[:,2])
sw2, _, _ = np.histogram2d(d[:,0], d[:,1], bins=[xe, ye], weights=d[:,2]**2)
print(json.dumps({"value": sw.T.ravel().tolist(), "err": np.sqrt(sw2.T.ravel()).tolist(), "numpy": np.__version__}))
`

// TestTH2FromGoHep reads the four TH2s of go-hep's gauss-h2.root (written
// by ROOT) and checks every cell against numpy's histogram2d of the data
// ROOT filled them with.
func TestTH2FromGoHep(t *testing.T) {
	file := gohep(t, gaussH2)
	data := gohep(t, gauss2D)
	for _, c := range []struct {
		name, edges string
		tol         float64
	}{
		{"h2d", "0,1,2,3", 1e-12},
		{"h2f", "0,1,2,3", 1e-6}, // TH2F stores float32
		{"h2d-var", "0,1.5,2,3", 1e-12},
		{"h2f-var", "0,1.5,2,3", 1e-6},
	} {
		tb, err := Read(file + ":" + c.name)
		if err != nil {
			t.Fatal(err)
		}
		var want struct {
			Value, Err []float64
			Numpy      string
		}
		runPython(t, histScript, &want, data, c.edges, c.edges)
		if !tb.Is2D() || tb.Len() != 9 || tb.LoName != XLo || tb.YHiName != YHi {
			t.Fatalf("%s: not 9 cells: %+v", c.name, tb)
		}
		e := splitNums(c.edges)
		for i := 0; i < 9; i++ {
			ix, iy := i%3, i/3 // x fastest
			if tb.Lo[i] != e[ix] || tb.Hi[i] != e[ix+1] || tb.YLo[i] != e[iy] || tb.YHi[i] != e[iy+1] {
				t.Errorf("%s cell %d: [%g,%g]×[%g,%g], want [%g,%g]×[%g,%g]", c.name, i+1, tb.Lo[i], tb.Hi[i], tb.YLo[i], tb.YHi[i], e[ix], e[ix+1], e[iy], e[iy+1])
			}
			for _, k := range []struct {
				col  string
				want float64
			}{{Value, want.Value[i]}, {Err, want.Err[i]}} {
				if got := tb.Column(k.col)[i]; math.Abs(got-k.want) > c.tol*math.Max(1, math.Abs(k.want)) {
					t.Errorf("%s cell %d %s: %v, numpy %s gives %v", c.name, i+1, k.col, got, want.Numpy, k.want)
				}
			}
		}
		// make-root-h2.py fills seven points outside the grid (101 to 107)
		// besides the data that falls outside it: the note reports them.
		if len(tb.Notes) != 1 {
			t.Errorf("%s: under/overflow not reported: %v", c.name, tb.Notes)
		}
	}
}

func splitNums(s string) []float64 {
	var out []float64
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			panic(err)
		}
		out = append(out, v)
	}
	return out
}

// pullScript is the independent computation of a cell comparison with
// uncorrelated errors: pull = (a - b)/√(σa² + σb²), χ² = Σ pull², its
// p-value from scipy's χ² distribution, read from the two CSV files.
const pullScript = `
import json, sys, numpy as np
from scipy import stats
a = np.genfromtxt(sys.argv[1], delimiter=",", names=True)
b = np.genfromtxt(sys.argv[2], delimiter=",", names=True)
for k in ("xlo", "xhi", "ylo", "yhi"):
    assert np.array_equal(a[k], b[k])
p = (a["value"] - b["value"]) / np.sqrt(a["err"]**2 + b["err"]**2)
c = float(np.sum(p**2))
print(json.dumps({"pulls": p.tolist(), "chi2": c, "p": float(stats.chi2.sf(c, len(p)))}))
`

// TestTH2PairAgreesWithCSV writes two TH2Ds with groot (fixed seeds,
// weights between 0.5 and 1.5, so √Σw² is not √Σw), checks the cells read
// against numpy's histogram2d of the same fills, compares the pair as ROOT
// histograms and as the same cells in CSV, and checks both comparisons
// against numpy and scipy.
func TestTH2PairAgreesWithCSV(t *testing.T) {
	dir := t.TempDir()
	var tabs [2]*table.Table
	var csvs [2]string
	for k := range 2 {
		h := hbook.NewH2D(4, 0, 2, 3, -1, 1.5)
		r := rand.New(rand.NewPCG(uint64(k+1), 7))
		var fills strings.Builder
		for range 5000 {
			x, y, w := r.NormFloat64()*0.7+1, r.NormFloat64()*0.8+0.2, 0.5+r.Float64()
			h.Fill(x, y, w)
			fmt.Fprintf(&fills, "%v %v %v\n", x, y, w)
		}
		dat := filepath.Join(dir, fmt.Sprintf("fills%d.dat", k))
		if err := os.WriteFile(dat, []byte(fills.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		root := filepath.Join(dir, []string{"a.root", "b.root"}[k])
		f, err := groot.Create(root)
		if err != nil {
			t.Fatal(err)
		}
		if err := f.Put("map", rhist.NewH2DFrom(h)); err != nil {
			t.Fatal(err)
		}
		if err := f.Close(); err != nil {
			t.Fatal(err)
		}
		if tabs[k], err = Read(root + ":map"); err != nil {
			t.Fatal(err)
		}
		var want struct{ Value, Err []float64 }
		// the edges as read, written exactly (shortest round-trip form)
		tb := tabs[k]
		xe, ye := fmt.Sprint(tb.Lo[0]), fmt.Sprint(tb.YLo[0])
		for i := 0; i < 4; i++ {
			xe += "," + fmt.Sprint(tb.Hi[i])
		}
		for i := 0; i < 3; i++ {
			ye += "," + fmt.Sprint(tb.YHi[4*i])
		}
		runPython(t, histScript, &want, dat, xe, ye)
		for i := range want.Value {
			for _, c := range []struct {
				col       string
				got, want float64
			}{{Value, tabs[k].Cols[0][i], want.Value[i]}, {Err, tabs[k].Cols[1][i], want.Err[i]}} {
				if math.Abs(c.got-c.want) > 1e-9*math.Max(1, math.Abs(c.want)) {
					t.Errorf("%s cell %d %s: %v, numpy %v", root, i+1, c.col, c.got, c.want)
				}
			}
		}
		csvs[k] = filepath.Join(dir, []string{"a.csv", "b.csv"}[k])
		w, err := os.Create(csvs[k])
		if err != nil {
			t.Fatal(err)
		}
		if err := tabs[k].WriteCSV(w); err != nil {
			t.Fatal(err)
		}
		if err := w.Close(); err != nil {
			t.Fatal(err)
		}
	}
	sel := []compare.Selection{{Value: Value, Errors: []string{Err}}}
	fromROOT, err := compare.Columns(tabs[0], tabs[1], sel, compare.Defaults())
	if err != nil {
		t.Fatal(err)
	}
	opt := table.CSVOptions{Lo: XLo, Hi: XHi, YLo: YLo, YHi: YHi}
	ca, err := table.ReadFile(csvs[0], opt)
	if err != nil {
		t.Fatal(err)
	}
	cb, err := table.ReadFile(csvs[1], opt)
	if err != nil {
		t.Fatal(err)
	}
	fromCSV, err := compare.Columns(ca, cb, sel, compare.Defaults())
	if err != nil {
		t.Fatal(err)
	}
	ra, rc := fromROOT[0], fromCSV[0]
	if !ra.Cells() || !rc.Cells() || ra.Bins != 12 {
		t.Fatalf("not a comparison of 12 cells: %d", ra.Bins)
	}
	if ra.Chi2 != rc.Chi2 || ra.PValue != rc.PValue {
		t.Errorf("ROOT χ² %v (p %v), CSV χ² %v (p %v)", ra.Chi2, ra.PValue, rc.Chi2, rc.PValue)
	}
	var want struct {
		Pulls   []float64
		Chi2, P float64
	}
	runPython(t, pullScript, &want, csvs[0], csvs[1])
	for i, p := range want.Pulls {
		if ra.Pulls[i] != rc.Pulls[i] || math.Abs(ra.Pulls[i]-p) > 1e-12*math.Max(1, math.Abs(p)) {
			t.Errorf("cell %d: pulls %v (ROOT) and %v (CSV), numpy %v", i+1, ra.Pulls[i], rc.Pulls[i], p)
		}
	}
	if math.Abs(ra.Chi2-want.Chi2) > 1e-10*want.Chi2 || math.Abs(ra.PValue-want.P) > 1e-10*math.Max(want.P, 1e-300) {
		t.Errorf("χ² %v p %v, numpy/scipy %v p %v", ra.Chi2, ra.PValue, want.Chi2, want.P)
	}
	var runs *compare.Criterion
	for i := range ra.Criteria {
		if ra.Criteria[i].Name == compare.CritRuns {
			runs = &ra.Criteria[i]
		}
	}
	if runs == nil || runs.Note != compare.CellsRunsNote || runs.Adjusted == nil {
		t.Errorf("runs criterion of cells: %+v", runs)
	}
}
