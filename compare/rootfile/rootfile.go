// Package rootfile reads ROOT files with go-hep's groot: 1-D and 2-D
// histograms and graphs into tandem tables ([Read]), and the numeric
// branches of a TTree as streamed rows ([ReadTree], [TreeColumns]).
//
// An object is named as FILE:PATH, for example "chain.root:spectra/h_rate".
// The table read from a histogram or graph has the bin edges "lo" and
// "hi", the value column "value", and either a symmetric uncertainty "err"
// or asymmetric ones "err_minus" and "err_plus":
//
//   - TH1D and TH1F (also with variable bin widths): edges from the axis,
//     values from the bin contents, errors √(Σw²) when the sum of squared
//     weights is stored, else √|content|. Under- and overflow are left out
//     and reported in [table.Table.Notes].
//
//   - TGraphErrors and TGraphAsymmErrors: a point (x, y) with x errors
//     (e_lo, e_hi) becomes the bin [x - e_lo, x + e_hi]; y errors become
//     "err" (equal) or "err_minus"/"err_plus".
//
//   - TH2D and TH2F: a 2-D table of cells (see [table.Table.Is2D]) with
//     the x edges "xlo", "xhi" and the y edges "ylo", "yhi", one cell per
//     bin in ROOT's global bin order (x fastest), values and errors as for
//     TH1. The under- and overflow bins (the frame of the grid) are left
//     out and their total reported in [table.Table.Notes].
//
// A plain TGraph has no x errors, hence no bins, and is refused.
//
// # Damaged files
//
// groot trusts the lengths a file declares, so a damaged file can make it
// allocate without bound, which no recover catches. A program that calls
// [Child] at start-up (cmd/tandem does) decodes every ROOT input in a
// child copy of itself under [Limits]: a memory cap (RLIMIT_DATA on Linux;
// the garbage collector's target elsewhere) and a time limit. Whatever the
// file holds, the caller gets a table, rows, or a *table.Error naming the
// input; a child that dies at a limit is reported as such.
package rootfile

import (
	"fmt"
	"math"
	"os"
	"slices"
	"strings"

	"go-hep.org/x/hep/groot/rhist"
	"go-hep.org/x/hep/groot/riofs"
	"go-hep.org/x/hep/groot/root"

	"tandem/compare/table"
)

// Column names of tables read from ROOT objects.
const (
	Value    = "value"
	Err      = "err"
	ErrMinus = "err_minus"
	ErrPlus  = "err_plus"
)

// IsSpec reports whether s names a ROOT file or an object in one.
func IsSpec(s string) bool {
	file, _, _ := strings.Cut(s, ".root:")
	return strings.HasSuffix(s, ".root") || file != s
}

// Split cuts "file.root:dir/name" into the file and the object path.
func Split(spec string) (file, object string) {
	if i := strings.Index(spec, ".root:"); i >= 0 {
		return spec[:i+5], spec[i+6:]
	}
	return spec, ""
}

// Read reads the object named by spec ("file.root:path"). When the path is
// empty and the file holds exactly one histogram or graph, that one is used.
func Read(spec string) (*table.Table, error) {
	file, _ := Split(spec)
	if _, err := os.Stat(file); err != nil {
		return nil, table.Errorf(file, 0, 0, "%v", unwrap(err))
	}
	if isolated.Load() {
		return histInChild(spec)
	}
	return readHist(spec)
}

// recoverAs turns a panic inside groot into an error naming spec: a bad
// file must give an error, never a crash.
func recoverAs(spec string, err *error) {
	if r := recover(); r != nil {
		*err = table.Errorf(spec, 0, 0, "not a readable ROOT file (%v)", r)
	}
}

// readHist decodes the histogram or graph named by spec in this process.
func readHist(spec string) (t *table.Table, err error) {
	defer recoverAs(spec, &err)
	file, path := Split(spec)
	f, err := open(file)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if path == "" {
		path, err = onlyObject(f)
		if err != nil {
			return nil, table.Errorf(file, 0, 0, "%v", err)
		}
	}
	obj, err := riofs.Dir(f).Get(path)
	if err != nil {
		e := table.Errorf(file, 0, 0, "no object %q in the file; it holds %s", path, contents(f))
		e.Hint = "name one of them as " + file + ":PATH"
		return nil, e
	}
	t = &table.Table{Source: spec, LoName: table.DefaultLo, HiName: table.DefaultHi}
	switch o := obj.(type) {
	case rhist.H2:
		if err := fromH2(t, o); err != nil {
			return nil, table.Errorf(spec, 0, 0, "%s: %v", path, err)
		}
	case rhist.H1:
		if err := fromH1(t, o); err != nil {
			return nil, table.Errorf(spec, 0, 0, "%v", err)
		}
	case rhist.GraphErrors:
		if err := fromGraph(t, o); err != nil {
			return nil, table.Errorf(spec, 0, 0, "%s: %v", path, err)
		}
	case rhist.Graph:
		return nil, table.Errorf(spec, 0, 0, "%s is a TGraph without errors: its points have no bin widths or uncertainties", path)
	default:
		return nil, table.Errorf(spec, 0, 0, "%s is a %s, not a histogram (TH1D, TH1F, TH2D, TH2F) or a graph with errors", path, obj.Class())
	}
	if err := t.Validate(); err != nil {
		return nil, err
	}
	return t, nil
}

func unwrap(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

// onlyObject returns the path of the single histogram or graph in f.
func onlyObject(f *riofs.File) (string, error) {
	var found []string
	err := riofs.Walk(f, func(path string, obj root.Object, err error) error {
		if err != nil {
			return err
		}
		switch obj.(type) {
		case rhist.H1, rhist.H2, rhist.Graph:
			found = append(found, strings.TrimPrefix(strings.TrimPrefix(path, f.Name()), "/"))
		}
		return nil
	})
	switch {
	case err != nil:
		return "", err
	case len(found) == 1:
		return found[0], nil
	case len(found) == 0:
		return "", fmt.Errorf("the file holds no histogram or graph; it holds %s", contents(f))
	}
	return "", fmt.Errorf("the file holds %d histograms and graphs (%s); name one as FILE.root:PATH", len(found), strings.Join(found, ", "))
}

// maxListed bounds the objects that [contents] names.
const maxListed = 20

// contents lists the objects of f with their classes, "h_rate (TH1D),
// spectra/h_map (TH2D), …", at most maxListed of them, for messages.
func contents(f *riofs.File) string {
	var names []string
	n := 0
	_ = riofs.Walk(f, func(path string, obj root.Object, err error) error {
		if err != nil {
			return nil
		}
		rel := strings.TrimPrefix(strings.TrimPrefix(path, f.Name()), "/")
		if rel == "" || rel == path {
			return nil // the file itself
		}
		if _, dir := obj.(riofs.Directory); dir {
			return nil
		}
		n++
		if len(names) < maxListed {
			names = append(names, fmt.Sprintf("%s (%s)", rel, obj.Class()))
		}
		return nil
	})
	slices.Sort(names)
	switch {
	case n == 0:
		return "no objects"
	case n > len(names):
		return strings.Join(names, ", ") + fmt.Sprintf(" and %d more", n-len(names))
	}
	return strings.Join(names, ", ")
}

// h1 is what tandem needs of a TH1D or TH1F.
type h1 interface {
	rhist.H1
	NbinsX() int
	XAxis() rhist.Axis
	XBinContent(int) float64
}

func fromH1(t *table.Table, h rhist.H1) error {
	hh, ok := h.(h1)
	if !ok {
		return fmt.Errorf("%s %q: unsupported histogram class", h.Class(), h.Name())
	}
	n := hh.NbinsX()
	ax := hh.XAxis()
	sumw2 := h.SumW2s()
	val := make([]float64, n)
	errs := make([]float64, n)
	t.Lo, t.Hi = make([]float64, n), make([]float64, n)
	for i := 1; i <= n; i++ {
		t.Lo[i-1] = ax.BinLowEdge(i)
		t.Hi[i-1] = ax.BinLowEdge(i) + ax.BinWidth(i)
		c := hh.XBinContent(i)
		val[i-1] = c
		if len(sumw2) == n+2 {
			errs[i-1] = math.Sqrt(sumw2[i])
		} else {
			errs[i-1] = math.Sqrt(math.Abs(c))
		}
	}
	if edges := ax.XBins(); len(edges) == n+1 {
		// variable bins: take the stored edges exactly
		copy(t.Lo, edges[:n])
		copy(t.Hi, edges[1:])
	} else {
		// fixed bins: ROOT computes edges as xmin + i·width; make
		// neighbours share their edge exactly
		for i := 1; i < n; i++ {
			t.Hi[i-1] = t.Lo[i]
		}
		t.Hi[n-1] = ax.XMax()
	}
	t.Names = []string{Value, Err}
	t.Cols = [][]float64{val, errs}
	under, over := hh.XBinContent(0), hh.XBinContent(n+1)
	if under != 0 || over != 0 {
		t.Notes = append(t.Notes, fmt.Sprintf("%s: underflow %s and overflow %s left out", h.Name(), table.Format(under), table.Format(over)))
	}
	return nil
}

func fromGraph(t *table.Table, g rhist.GraphErrors) error {
	n := g.Len()
	if n == 0 {
		return fmt.Errorf("graph has no points")
	}
	val, down, up := make([]float64, n), make([]float64, n), make([]float64, n)
	t.Lo, t.Hi = make([]float64, n), make([]float64, n)
	sym := true
	for i := 0; i < n; i++ {
		x, y := g.XY(i)
		exl, exh := g.XError(i)
		eyl, eyh := g.YError(i)
		if !(exl+exh > 0) {
			return fmt.Errorf("point %d (x = %s) has no x errors, so no bin width", i+1, table.Format(x))
		}
		t.Lo[i], t.Hi[i] = x-exl, x+exh
		val[i], down[i], up[i] = y, eyl, eyh
		if eyl != eyh {
			sym = false
		}
	}
	t.Names = []string{Value}
	t.Cols = [][]float64{val}
	if sym {
		t.Names, t.Cols = append(t.Names, Err), append(t.Cols, down)
	} else {
		t.Names = append(t.Names, ErrMinus, ErrPlus)
		t.Cols = append(t.Cols, down, up)
	}
	return nil
}

// Edge names of the 2-D tables read from TH2D and TH2F.
const (
	XLo = "xlo"
	XHi = "xhi"
	YLo = "ylo"
	YHi = "yhi"
)

// h2 is what tandem needs of a TH2D or TH2F; XBinContent takes ROOT's
// global bin number ix + (nx+2)·iy.
type h2 interface {
	rhist.H2
	NbinsX() int
	NbinsY() int
	XAxis() rhist.Axis
	YAxis() rhist.Axis
	XBinContent(int) float64
}

// axisEdges returns the n+1 edges of an axis: the stored edges of a
// variable binning, else xmin + i·width with the last edge xmax exactly.
func axisEdges(ax rhist.Axis, n int) []float64 {
	if e := ax.XBins(); len(e) == n+1 {
		return slices.Clone(e)
	}
	e := make([]float64, n+1)
	for i := 1; i <= n; i++ {
		e[i-1] = ax.BinLowEdge(i)
	}
	e[n] = ax.XMax()
	return e
}

func fromH2(t *table.Table, h rhist.H2) error {
	hh, ok := h.(h2)
	if !ok {
		return fmt.Errorf("%s %q: unsupported histogram class", h.Class(), h.Name())
	}
	nx, ny := hh.NbinsX(), hh.NbinsY()
	if nx <= 0 || ny <= 0 || nx > MaxBins/ny {
		return fmt.Errorf("%d × %d bins: want at least one and at most %d cells", nx, ny, MaxBins)
	}
	xe, ye := axisEdges(hh.XAxis(), nx), axisEdges(hh.YAxis(), ny)
	sumw2 := h.SumW2s()
	stride, total := nx+2, (nx+2)*(ny+2)
	if len(sumw2) != 0 && len(sumw2) != total {
		return fmt.Errorf("%d sums of squared weights for %d bins", len(sumw2), total)
	}
	n := nx * ny
	t.LoName, t.HiName, t.YLoName, t.YHiName = XLo, XHi, YLo, YHi
	t.Lo, t.Hi, t.YLo, t.YHi = make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n)
	val, errs := make([]float64, 0, n), make([]float64, 0, n)
	flow := 0.0
	for iy := 0; iy <= ny+1; iy++ {
		for ix := 0; ix <= nx+1; ix++ {
			g := ix + stride*iy
			c := hh.XBinContent(g)
			if ix == 0 || iy == 0 || ix == nx+1 || iy == ny+1 {
				flow += c
				continue
			}
			t.Lo, t.Hi = append(t.Lo, xe[ix-1]), append(t.Hi, xe[ix])
			t.YLo, t.YHi = append(t.YLo, ye[iy-1]), append(t.YHi, ye[iy])
			val = append(val, c)
			if len(sumw2) == total {
				errs = append(errs, math.Sqrt(sumw2[g]))
			} else {
				errs = append(errs, math.Sqrt(math.Abs(c)))
			}
		}
	}
	t.Names = []string{Value, Err}
	t.Cols = [][]float64{val, errs}
	if flow != 0 {
		t.Notes = append(t.Notes, fmt.Sprintf("%s: under- and overflow bins holding %s in all left out", h.Name(), table.Format(flow)))
	}
	return nil
}
