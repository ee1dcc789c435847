package events

import (
	"math"
	"strings"

	"tandem/compare/rootfile"
	"tandem/compare/table"
)

// TreeFuncs are the two calls a ROOT TTree source needs: the names of a
// tree's columns (branches) and a stream of its rows as float64, in the
// order of the requested columns. compare/rootfile provides them.
type TreeFuncs struct {
	Columns func(spec string) ([]rootfile.TreeColumn, error)
	Read    func(spec string, columns []string, fn func(row []float64) error) error
}

// RootTrees reads trees with compare/rootfile.
var RootTrees = TreeFuncs{Columns: rootfile.TreeColumns, Read: rootfile.ReadTree}

// treeTable is an event table in a ROOT TTree, named file.root:tree or
// file.root:dir/tree. Every branch arrives as float64: keys must hold
// integers below 2⁵³ and cuts 0 or 1.
type treeTable struct {
	spec string
	f    TreeFuncs
	cols []ColumnInfo
}

// OpenTree opens a TTree through f.
func OpenTree(spec string, f TreeFuncs) (Source, error) {
	cols, err := f.Columns(spec)
	if err != nil {
		return nil, err
	}
	t := &treeTable{spec: spec, f: f}
	for _, c := range cols {
		k := Other
		switch {
		case !c.Numeric:
		case c.Kind == "bool":
			k = Bool
		case strings.HasPrefix(c.Kind, "int") || strings.HasPrefix(c.Kind, "uint"):
			k = Int
		default:
			k = Float
		}
		t.cols = append(t.cols, ColumnInfo{Name: c.Name, Kind: k})
	}
	return t, nil
}

func (t *treeTable) Name() string                   { return t.spec }
func (t *treeTable) Unit() string                   { return "entry" }
func (t *treeTable) Columns() ([]ColumnInfo, error) { return t.cols, nil }

func (t *treeTable) Scan(l Layout, fn func(*Batch) error) error {
	cols := append(append(append([]string{}, l.Keys...), l.Vars...), l.Cuts...)
	nk, nv := len(l.Keys), len(l.Vars)
	b := &Batch{}
	var entry int64
	err := t.f.Read(t.spec, cols, func(row []float64) error {
		if len(row) != len(cols) {
			return table.Errorf(t.spec, 0, 0, "internal error: tree row has %d values, want %d", len(row), len(cols))
		}
		for j, v := range row[:nk] {
			if v != math.Trunc(v) || math.Abs(v) >= 1<<53 {
				return errAt(t, entry, "key %q: %v is not an integer below 2^53", l.Keys[j], v)
			}
			b.Keys = append(b.Keys, int64(v))
		}
		b.Vals = append(b.Vals, row[nk:nk+nv]...)
		var c uint64
		for j, v := range row[nk+nv:] {
			switch v {
			case 1:
				c |= 1 << j
			case 0:
			default:
				return errAt(t, entry, "cut %q: %v is not 0 or 1", l.Cuts[j], v)
			}
		}
		b.Cuts = append(b.Cuts, c)
		b.Pos = append(b.Pos, entry)
		entry++
		return b.added(fn)
	})
	return b.last(err, fn)
}

// IsTreeSpec reports whether a name points into a ROOT file
// (file.root:tree).
func IsTreeSpec(name string) bool {
	i := strings.Index(strings.ToLower(name), ".root:")
	return i > 0 && len(name) > i+6
}
