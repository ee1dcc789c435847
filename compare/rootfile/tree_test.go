package rootfile

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"go-hep.org/x/hep/groot"
	"go-hep.org/x/hep/groot/rtree"

	"tandem/compare/table"
)

// TestFlatTreeDocumentedValues reads go-hep's x-flat-tree.root (module
// path groot/testdata/x-flat-tree.root) and checks every scalar branch
// against the values go-hep documents for it in ScannerData.want
// (groot/rtree/reader_test.go): entry i has B = (i even), I8..I64 = -i,
// U8..U64 = i, F32, F64, D16, D32 = i.
func TestFlatTreeDocumentedValues(t *testing.T) {
	spec := gohep(t, flatTree) + ":tree"
	cols := []string{"B", "I8", "I16", "I32", "I64", "U8", "U16", "U32", "U64", "F32", "F64", "D16", "D32"}
	n := 0
	err := ReadTree(spec, cols, func(row []float64) error {
		i := float64(n)
		b := 0.0
		if n%2 == 0 {
			b = 1
		}
		want := []float64{b, -i, -i, -i, -i, i, i, i, i, i, i, i, i}
		if !reflect.DeepEqual(row, want) {
			t.Fatalf("entry %d: got %v, want %v", n, row, want)
		}
		n++
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if want := entries(t, spec); n != want || n == 0 {
		t.Errorf("%d rows, tree has %d entries", n, want)
	}
}

// entries counts the entries of a tree with go-hep directly.
func entries(t *testing.T, spec string) int {
	file, path := Split(spec)
	f, err := groot.Open(file)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	obj, err := f.Get(path)
	if err != nil {
		t.Fatal(err)
	}
	return int(obj.(rtree.Tree).Entries())
}

// TestTreeColumns lists x-flat-tree.root's branches: the scalars are
// numeric, the string, arrays and slices are not.
func TestTreeColumns(t *testing.T) {
	cols, err := TreeColumns(gohep(t, flatTree) + ":tree")
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[string]TreeColumn{}
	for _, c := range cols {
		kinds[c.Name] = c
	}
	for name, want := range map[string]TreeColumn{
		"B": {"B", "bool", true}, "I64": {"I64", "int64", true}, "U8": {"U8", "uint8", true},
		"F32": {"F32", "float32", true}, "D32": {"D32", "root.Double32", true},
		"Str": {"Str", "string", false}, "ArrF64": {"ArrF64", "[10]float64", false}, "SliI32": {"SliI32", "[][]int32", false},
	} {
		got, ok := kinds[name]
		if name == "SliI32" && ok { // the kind string of slices is go-hep's business
			got.Kind = want.Kind
		}
		if !ok || got != want {
			t.Errorf("%s: %+v, want %+v", name, got, want)
		}
	}
	err = ReadTree(gohep(t, flatTree)+":tree", []string{"Str"}, func([]float64) error { return nil })
	if err == nil || !strings.Contains(err.Error(), "not a number") {
		t.Errorf("string branch: %v", err)
	}
}

// TestTreeAgainstRtree reads small-flat-tree.root (groot/testdata in the
// go-hep module) with ReadTree and, independently, with go-hep's rtree
// reader in this process, and requires the same numbers.
func TestTreeAgainstRtree(t *testing.T) {
	spec := gohep(t, smallTree) + ":tree"
	cols, err := TreeColumns(spec)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, c := range cols {
		if c.Numeric {
			names = append(names, c.Name)
		}
	}
	if len(names) < 3 {
		t.Fatalf("numeric columns %v", names)
	}
	var got [][]float64
	if err := ReadTree(spec, names, func(row []float64) error {
		got = append(got, append([]float64(nil), row...))
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	// the independent read
	file, path := Split(spec)
	f, err := groot.Open(file)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	obj, err := f.Get(path)
	if err != nil {
		t.Fatal(err)
	}
	tree := obj.(rtree.Tree)
	all := rtree.NewReadVars(tree)
	var vars []rtree.ReadVar
	for _, name := range names {
		for _, v := range all {
			if v.Name == name {
				vars = append(vars, v)
			}
		}
	}
	r, err := rtree.NewReader(tree, vars)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	k := 0
	err = r.Read(func(ctx rtree.RCtx) error {
		for j, v := range vars {
			x := reflect.ValueOf(v.Value).Elem()
			var want float64
			switch x.Kind() {
			case reflect.Bool:
				if x.Bool() {
					want = 1
				}
			case reflect.Float32, reflect.Float64:
				want = x.Float()
			case reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
				want = float64(x.Int())
			default:
				want = float64(x.Uint())
			}
			if got[k][j] != want && !(math.IsNaN(want) && math.IsNaN(got[k][j])) {
				t.Fatalf("entry %d %s: %v, rtree %v", k, names[j], got[k][j], want)
			}
		}
		k++
		return nil
	})
	if err != nil || k != len(got) || k == 0 {
		t.Errorf("rtree read %d entries (%v), ReadTree %d", k, err, len(got))
	}
}

// TestTreeExactness: 64-bit integers up to 2^53 are read exactly, beyond
// it they are refused, naming the entry and branch.
func TestTreeExactness(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		name   string
		set    func(i int, e *event)
		col    string
		refuse bool
	}{
		{"int64 at 2^53", func(i int, e *event) { e.Evt = 1 << 53 }, "evt", false},
		{"int64 at -2^53", func(i int, e *event) { e.Evt = -(1 << 53) }, "evt", false},
		{"int64 beyond", func(i int, e *event) {
			if i == 3 {
				e.Evt = 1<<53 + 1
			}
		}, "evt", true},
		{"int64 min", func(i int, e *event) {
			if i == 3 {
				e.Evt = math.MinInt64
			}
		}, "evt", true},
		{"uint64 beyond", func(i int, e *event) {
			if i == 3 {
				e.U64 = math.MaxUint64
			}
		}, "u64", true},
	} {
		p := filepath.Join(dir, "t.root")
		if err := writeTree(p, "", 5, c.set); err != nil {
			t.Fatal(err)
		}
		n := 0
		err := ReadTree(p+":events", []string{c.col}, func(row []float64) error { n++; return nil })
		if !c.refuse {
			if err != nil || n != 5 {
				t.Errorf("%s: %d rows, %v", c.name, n, err)
			}
			continue
		}
		if err == nil || !strings.Contains(err.Error(), "entry 3") || !strings.Contains(err.Error(), "2^53") {
			t.Errorf("%s: %v", c.name, err)
		} else {
			mustBeInputError(t, err)
		}
	}
}

// TestTreeOrderAndKinds reads the groot-written seed tree in a directory,
// with the columns in an order of our choosing, and checks the values the
// writer put there.
func TestTreeOrderAndKinds(t *testing.T) {
	p := filepath.Join(t.TempDir(), "t.root")
	const n = 3000 // several baskets and several row chunks
	if err := writeTree(p, "sub", n, func(i int, e *event) {}); err != nil {
		t.Fatal(err)
	}
	cols := []string{"pt", "run", "q", "pass", "evt", "e", "n16", "u8", "u16", "u32", "u64"}
	k := 0
	err := ReadTree(p+":sub/events", cols, func(row []float64) error {
		i := float64(k)
		pass := 0.0
		if k%2 == 1 {
			pass = 1
		}
		want := []float64{float64(float32(i) / 8), 7, float64(int8(-k)), pass, 1000 + i, i / 4,
			float64(int16(300 * k)), float64(uint8(k)), float64(uint16(k)), i, i}
		if !reflect.DeepEqual(row, want) {
			t.Fatalf("entry %d: %v, want %v", k, row, want)
		}
		k++
		return nil
	})
	if err != nil || k != n {
		t.Fatalf("%d rows: %v", k, err)
	}
	// an error from fn stops the scan and comes back unchanged
	stop := errors.New("enough")
	k = 0
	if err := ReadTree(p+":sub/events", []string{"e"}, func([]float64) error {
		if k++; k == 1500 {
			return stop
		}
		return nil
	}); err != stop || k != 1500 {
		t.Errorf("stop: %v after %d rows", err, k)
	}
	for _, c := range []struct{ spec, want string }{
		{p + ":sub/events", `no branch "nope"`},
		{p, "name the tree"},
		{p + ":sub", "not a TTree"},
		{p + ":missing", `no object "missing"`},
		{p + "x:events", "no such file"},
	} {
		err := ReadTree(c.spec, []string{"nope"}, func([]float64) error { return nil })
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want %q", c.spec, err, c.want)
			continue
		}
		var te *table.Error
		if !errors.As(err, &te) {
			t.Errorf("%s: %T", c.spec, err)
		}
	}
	if err := ReadTree(p+":sub/events", []string{"e", "e"}, func([]float64) error { return nil }); err == nil || !strings.Contains(err.Error(), "twice") {
		t.Errorf("duplicate column: %v", err)
	}
}

// FuzzReadTree: corrupted versions of the groot-written seed tree
// (testdata/seeds/tree.root) give rows or a *table.Error, through the
// child as tandem reads them; never a crash.
func FuzzReadTree(f *testing.F) {
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
		if _, err := TreeColumns(p + ":dir/events"); err != nil {
			mustBeInputError(t, err)
		}
		err := ReadTree(p+":dir/events", []string{"evt", "e", "pass", "u64"}, func(row []float64) error {
			if len(row) != 4 {
				t.Fatalf("row of %d", len(row))
			}
			return nil
		})
		if err != nil {
			mustBeInputError(t, err)
		}
	})
}
