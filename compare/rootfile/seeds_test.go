package rootfile

import (
	"errors"
	"flag"
	"path/filepath"
	"tandem/compare/fuzzseed"
	"testing"

	"go-hep.org/x/hep/groot"
	"go-hep.org/x/hep/groot/rhist"
	"go-hep.org/x/hep/groot/riofs"
	"go-hep.org/x/hep/groot/rtree"
	"go-hep.org/x/hep/hbook"

	"tandem/compare/table"
)

var update = flag.Bool("update", false, "rewrite the ROOT seed files in testdata/seeds")

const seedGlob = "testdata/seeds/*.root"

// writeSeeds writes the seed files of the fuzz targets with groot: a
// histogram "h" and a graph "g" (hist.root), and a TTree "dir/events" of
// every numeric leaf type (tree.root). They are ours: written by this
// code, not copied from anywhere.
func writeSeeds(dir string) error {
	f, err := groot.Create(filepath.Join(dir, "hist.root"))
	if err != nil {
		return err
	}
	h := hbook.NewH1DFromEdges([]float64{0, 1, 2.5, 4, 10})
	for i, x := range []float64{0.5, 0.7, 1.2, 3.9, 5, 9.99, -1, 11} {
		h.Fill(x, 1+0.25*float64(i))
	}
	g := hbook.NewS2D(
		hbook.Point2D{X: 1, Y: 10, ErrX: hbook.Range{Min: 0.5, Max: 0.5}, ErrY: hbook.Range{Min: 1, Max: 2}},
		hbook.Point2D{X: 2, Y: 12, ErrX: hbook.Range{Min: 0.5, Max: 0.5}, ErrY: hbook.Range{Min: 1.5, Max: 1}},
	)
	if err := f.Put("h", rhist.NewH1DFrom(h)); err != nil {
		return err
	}
	if err := f.Put("g", rhist.NewGraphAsymmErrorsFrom(g)); err != nil {
		return err
	}
	if err := f.Close(); err != nil {
		return err
	}
	if err := writeSeed2D(filepath.Join(dir, "hist2.root")); err != nil {
		return err
	}
	return writeTree(filepath.Join(dir, "tree.root"), "dir", 40, func(i int, e *event) {})
}

// writeSeed2D writes a TH2D "h2" of 3 × 2 cells with variable y bins,
// some fills in the under- and overflow frame.
func writeSeed2D(path string) error {
	f, err := groot.Create(path)
	if err != nil {
		return err
	}
	h := hbook.NewH2DFromEdges([]float64{0, 1, 2, 4}, []float64{-1, 0.5, 3})
	for i, xy := range [][2]float64{{0.5, 0}, {1.5, 1}, {3, 2}, {3.9, -0.9}, {0.1, 2.9}, {-1, 0}, {5, 5}} {
		h.Fill(xy[0], xy[1], 1+0.5*float64(i))
	}
	if err := f.Put("h2", rhist.NewH2DFrom(h)); err != nil {
		return err
	}
	return f.Close()
}

// event is one entry of the trees written by writeTree.
type event struct {
	Run   int32
	Evt   int64
	E     float64
	Pt    float32
	Pass  bool
	Q     int8
	N16   int16
	U8    uint8
	U16   uint16
	U32   uint32
	U64   uint64
	Label string
}

// writeTree writes n entries of event to a tree "events" (inside the
// directory sub when it is not empty); set adjusts entry i after the
// defaults run = 7, evt = 1000+i, e = i/4, pt = i/8, pass = i odd,
// q = -i, n16 = 300·i, u8..u64 = i.
func writeTree(path, sub string, n int, set func(i int, e *event)) error {
	f, err := groot.Create(path)
	if err != nil {
		return err
	}
	defer f.Close()
	var d riofs.Directory = f
	if sub != "" {
		if d, err = riofs.Dir(f).Mkdir(sub); err != nil {
			return err
		}
	}
	var e event
	w, err := rtree.NewWriter(d, "events", []rtree.WriteVar{
		{Name: "run", Value: &e.Run}, {Name: "evt", Value: &e.Evt}, {Name: "e", Value: &e.E},
		{Name: "pt", Value: &e.Pt}, {Name: "pass", Value: &e.Pass}, {Name: "q", Value: &e.Q},
		{Name: "n16", Value: &e.N16}, {Name: "u8", Value: &e.U8}, {Name: "u16", Value: &e.U16},
		{Name: "u32", Value: &e.U32}, {Name: "u64", Value: &e.U64}, {Name: "label", Value: &e.Label},
	}, rtree.WithBasketSize(256))
	if err != nil {
		return err
	}
	for i := 0; i < n; i++ {
		e = event{Run: 7, Evt: 1000 + int64(i), E: float64(i) / 4, Pt: float32(i) / 8, Pass: i%2 == 1,
			Q: int8(-i), N16: int16(300 * i), U8: uint8(i), U16: uint16(i), U32: uint32(i), U64: uint64(i), Label: "x"}
		set(i, &e)
		if _, err := w.Write(); err != nil {
			return err
		}
	}
	if err := w.Close(); err != nil {
		return err
	}
	return f.Close()
}

// TestWriteSeeds rewrites the seeds with -update; otherwise it checks that
// they are there and read as expected.
func TestWriteSeeds(t *testing.T) {
	if *update {
		if err := writeSeeds("testdata/seeds"); err != nil {
			t.Fatal(err)
		}
		if err := writeStreams("testdata/streams"); err != nil {
			t.Fatal(err)
		}
	}
	if len(seedFiles(t)) < 2 {
		t.Fatal("seed files missing")
	}
	if _, err := Read("testdata/seeds/hist.root:h"); err != nil {
		t.Error(err)
	}
	if h2, err := Read("testdata/seeds/hist2.root:h2"); err != nil || !h2.Is2D() || h2.Len() != 6 {
		t.Errorf("2-D seed: %v", err)
	}
	n := 0
	if err := ReadTree("testdata/seeds/tree.root:dir/events", []string{"evt"}, func(row []float64) error {
		if row[0] != float64(1000+n) {
			t.Errorf("entry %d: evt %v", n, row[0])
		}
		n++
		return nil
	}); err != nil || n != 40 {
		t.Errorf("seed tree: %d entries, %v", n, err)
	}
}

// seedFiles reads the seed ROOT files; a glob that matches nothing fails.
func seedFiles(tb testing.TB) [][]byte {
	tb.Helper()
	return fuzzseed.Glob(tb, seedGlob)
}

// mustBeInputError fails unless err is a *table.Error naming a file.
func mustBeInputError(tb testing.TB, err error) {
	tb.Helper()
	var te *table.Error
	if !errors.As(err, &te) || te.File == "" || te.Msg == "" {
		tb.Fatalf("not a clean input error: %T %v", err, err)
	}
}
