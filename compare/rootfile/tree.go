package rootfile

import (
	"errors"
	"fmt"
	"math"
	"os"
	"reflect"
	"strings"

	"go-hep.org/x/hep/groot"
	"go-hep.org/x/hep/groot/riofs"
	"go-hep.org/x/hep/groot/root"
	"go-hep.org/x/hep/groot/rtree"

	"tandem/compare/table"
)

// TreeColumn is one leaf of a TTree as [TreeColumns] lists it.
type TreeColumn struct {
	// Name is the branch name, or "branch.leaf" for a branch with several
	// leaves.
	Name string `json:"name"`
	// Kind is the Go type go-hep decodes the leaf into, for example
	// "float64", "int32", "bool", "string" or "[]float32".
	Kind string `json:"kind"`
	// Numeric reports whether [ReadTree] can read the column: a scalar
	// float, integer or bool.
	Numeric bool `json:"numeric"`
}

// maxExact is 2^53: every integer of at most this magnitude is exactly a
// float64; 2^53 + 1 is the first that is not.
const maxExact = 1 << 53

// rowChunk is the number of rows decoded before they are handed on.
const rowChunk = 1024

// errStop ends a tree scan early without an error of its own.
var errStop = errors.New("stop")

// openTree opens the TTree named by spec ("file.root:dir/tree"). The
// caller closes the file.
func openTree(spec string) (*riofs.File, rtree.Tree, error) {
	file, path := Split(spec)
	if path == "" {
		return nil, nil, table.Errorf(spec, 0, 0, "name the tree as FILE.root:TREE (or FILE.root:DIR/TREE)")
	}
	f, err := open(file)
	if err != nil {
		return nil, nil, err
	}
	obj, err := riofs.Dir(f).Get(path)
	if err != nil {
		f.Close()
		return nil, nil, table.Errorf(spec, 0, 0, "no object %q in the file: %v", path, err)
	}
	tree, ok := obj.(rtree.Tree)
	if !ok {
		f.Close()
		return nil, nil, table.Errorf(spec, 0, 0, "%s is a %s, not a TTree", path, obj.Class())
	}
	return f, tree, nil
}

// open opens a ROOT file with groot, reporting problems as *table.Error.
func open(file string) (*riofs.File, error) {
	f, err := groot.Open(file)
	if err != nil {
		return nil, table.Errorf(file, 0, 0, "not a readable ROOT file: %v", err)
	}
	return f, nil
}

// leafColumns lists the leaves of tree with the read variables go-hep
// would decode them into.
func leafColumns(tree rtree.Tree) ([]TreeColumn, []rtree.ReadVar) {
	vars := rtree.NewReadVars(tree)
	multi := map[string]bool{}
	for _, b := range tree.Branches() {
		multi[b.Name()] = len(b.Leaves()) > 1
	}
	cols := make([]TreeColumn, len(vars))
	for i, v := range vars {
		name := v.Name
		if multi[v.Name] {
			name = v.Name + "." + v.Leaf
		}
		t := reflect.TypeOf(v.Value).Elem()
		cols[i] = TreeColumn{Name: name, Kind: t.String(), Numeric: numeric(t)}
	}
	return cols, vars
}

func numeric(t reflect.Type) bool {
	switch t.Kind() {
	case reflect.Bool, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64,
		reflect.Float32, reflect.Float64:
		return true
	}
	return false
}

// treeColumns lists the columns of the tree in this process.
func treeColumns(spec string) (cols []TreeColumn, err error) {
	defer recoverAs(spec, &err)
	f, tree, err := openTree(spec)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	cols, _ = leafColumns(tree)
	return cols, nil
}

// readTree reads the named columns of the tree in this process and hands
// the rows on in chunks: emit gets up to rowChunk rows of len(columns)
// values each, flattened. A non-nil error from emit stops the scan and is
// returned as it is.
func readTree(spec string, columns []string, emit func(rows []float64) error) (err error) {
	defer recoverAs(spec, &err)
	if len(columns) == 0 {
		return table.Errorf(spec, 0, 0, "no columns requested")
	}
	f, tree, err := openTree(spec)
	if err != nil {
		return err
	}
	defer f.Close()
	cols, vars := leafColumns(tree)
	index := map[string]int{}
	for i, c := range cols {
		index[c.Name] = i
	}
	var chosen []rtree.ReadVar
	conv := make([]func() (float64, bool), len(columns))
	seen := map[string]bool{}
	for j, name := range columns {
		i, ok := index[name]
		switch {
		case seen[name]:
			return table.Errorf(spec, 0, 0, "column %q requested twice", name)
		case !ok:
			return table.Errorf(spec, 0, 0, "no branch %q in the tree (it has %s)", name, columnList(cols))
		case !cols[i].Numeric:
			return table.Errorf(spec, 0, 0, "branch %q holds %s, not a number: tandem reads scalar floats, integers and bools", name, cols[i].Kind)
		}
		seen[name] = true
		chosen = append(chosen, vars[i])
		conv[j] = converter(vars[i].Value)
	}
	r, err := rtree.NewReader(tree, chosen)
	if err != nil {
		return table.Errorf(spec, 0, 0, "cannot read the tree: %v", err)
	}
	defer r.Close()
	buf := make([]float64, 0, rowChunk*len(columns))
	var emitErr error
	err = r.Read(func(ctx rtree.RCtx) error {
		for j, c := range conv {
			v, exact := c()
			if !exact {
				return table.Errorf(spec, 0, 0, "entry %d of branch %q holds the integer %v, beyond ±2^53: not exact as a float64", ctx.Entry, columns[j], reflect.ValueOf(chosen[j].Value).Elem().Interface())
			}
			buf = append(buf, v)
		}
		if len(buf) == cap(buf) {
			if emitErr = emit(buf); emitErr != nil {
				return errStop
			}
			buf = buf[:0]
		}
		return nil
	})
	if emitErr != nil {
		return emitErr
	}
	if err != nil {
		var te *table.Error
		if errors.As(err, &te) {
			return te
		}
		return table.Errorf(spec, 0, 0, "cannot read the tree: %v", err)
	}
	if len(buf) > 0 {
		return emit(buf)
	}
	return nil
}

// converter returns a function that reads the value behind ptr as a
// float64 and reports whether the conversion is exact (only 64-bit
// integers beyond 2^53 are not).
func converter(ptr any) func() (float64, bool) {
	switch p := ptr.(type) {
	case *float64:
		return func() (float64, bool) { return *p, true }
	case *float32:
		return func() (float64, bool) { return float64(*p), true }
	case *root.Double32:
		return func() (float64, bool) { return float64(*p), true }
	case *root.Float16:
		return func() (float64, bool) { return float64(*p), true }
	case *bool:
		return func() (float64, bool) {
			if *p {
				return 1, true
			}
			return 0, true
		}
	case *int8:
		return func() (float64, bool) { return float64(*p), true }
	case *int16:
		return func() (float64, bool) { return float64(*p), true }
	case *int32:
		return func() (float64, bool) { return float64(*p), true }
	case *int64:
		return func() (float64, bool) { return float64(*p), *p >= -maxExact && *p <= maxExact }
	case *uint8:
		return func() (float64, bool) { return float64(*p), true }
	case *uint16:
		return func() (float64, bool) { return float64(*p), true }
	case *uint32:
		return func() (float64, bool) { return float64(*p), true }
	case *uint64:
		return func() (float64, bool) { return float64(*p), *p <= maxExact }
	}
	// numeric() admitted a type this switch does not know: a go-hep
	// named type of another kind. Read it through reflection.
	v := reflect.ValueOf(ptr).Elem()
	return func() (float64, bool) {
		switch v.Kind() {
		case reflect.Float32, reflect.Float64:
			return v.Float(), true
		case reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
			i := v.Int()
			return float64(i), i >= -maxExact && i <= maxExact
		case reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
			return float64(v.Uint()), v.Uint() <= maxExact
		case reflect.Bool:
			if v.Bool() {
				return 1, true
			}
			return 0, true
		}
		return math.NaN(), false
	}
}

func columnList(cols []TreeColumn) string {
	var names []string
	for _, c := range cols {
		if c.Numeric {
			names = append(names, c.Name)
		}
	}
	if len(names) == 0 {
		return "no numeric branch"
	}
	if len(names) > 12 {
		names = append(names[:12], fmt.Sprintf("… %d more", len(names)-12))
	}
	return strings.Join(names, ", ")
}

// TreeColumns lists the leaves of the TTree named by spec
// ("file.root:tree" or "file.root:dir/tree") with their kinds.
func TreeColumns(spec string) ([]TreeColumn, error) {
	file, _ := Split(spec)
	if _, err := os.Stat(file); err != nil {
		return nil, table.Errorf(file, 0, 0, "%v", unwrap(err))
	}
	if isolated.Load() {
		return columnsInChild(spec)
	}
	return treeColumns(spec)
}

// ReadTree streams the rows of the TTree named by spec ("file.root:tree"
// or "file.root:dir/tree"), calling fn once per entry with the values of
// the named columns in the order given. Every numeric leaf type is
// converted to float64: float32 and float64, signed and unsigned integers
// of 8 to 64 bits, and bool as 0 or 1. A 64-bit integer beyond ±2^53 is
// refused, as it has no exact float64.
//
// fn must not keep row: the slice is reused for the next entry. An error
// from fn stops the scan and is returned unchanged; every other problem is
// a *table.Error naming the file.
func ReadTree(spec string, columns []string, fn func(row []float64) error) error {
	file, _ := Split(spec)
	if _, err := os.Stat(file); err != nil {
		return table.Errorf(file, 0, 0, "%v", unwrap(err))
	}
	if isolated.Load() {
		return treeInChild(spec, columns, fn)
	}
	n := len(columns)
	return readTree(spec, columns, func(rows []float64) error {
		for i := 0; i+n <= len(rows); i += n {
			if err := fn(rows[i : i+n : i+n]); err != nil {
				return err
			}
		}
		return nil
	})
}
