package events

import (
	"errors"
	"fmt"
	"strings"

	"tandem/compare/table"
)

// MaxKeys is the largest number of key columns; MaxCuts that of cut
// columns.
const (
	MaxKeys = 4
	MaxCuts = 64
)

// Kind is what a column holds, as far as a reader can tell before the
// rows are read.
type Kind int

// Column kinds. Integer columns may serve as keys, cuts (0/1) or variables;
// boolean columns as cuts or variables (false is 0, true 1); floating-point
// columns as variables.
const (
	Other Kind = iota
	Int
	Float
	Bool
)

func (k Kind) String() string {
	return [...]string{"other", "integer", "float", "boolean"}[k]
}

// Numeric reports whether a column of this kind can be a variable.
func (k Kind) Numeric() bool { return k == Int || k == Float || k == Bool }

// ColumnInfo names a column and its kind.
type ColumnInfo struct {
	Name string
	Kind Kind
}

// Layout names the columns a scan delivers, in the order of the Batch
// arrays.
type Layout struct {
	Keys, Vars, Cuts []string
}

// Batch is a block of consecutive rows of one table. Row i has the keys
// Keys[i·K : (i+1)·K], the variables Vals[i·V : (i+1)·V] (K and V the
// numbers of key and variable columns of the Layout), the cut bits Cuts[i]
// (bit j set when the row passes cut j) and its position Pos[i] in the
// source (a line number for text, a row or entry number otherwise).
type Batch struct {
	N    int
	Keys []int64
	Vals []float64
	Cuts []uint64
	Pos  []int64
}

// reset empties b, keeping its storage.
func (b *Batch) reset() {
	b.N = 0
	b.Keys, b.Vals, b.Cuts, b.Pos = b.Keys[:0], b.Vals[:0], b.Cuts[:0], b.Pos[:0]
}

// BatchRows is the number of rows readers put in one batch.
const BatchRows = 4096

// added counts a row just appended to b; when b holds BatchRows rows it
// passes b to fn and empties it.
func (b *Batch) added(fn func(*Batch) error) error {
	b.N++
	if b.N < BatchRows {
		return nil
	}
	if err := fn(b); err != nil {
		return err
	}
	b.reset()
	return nil
}

// last ends a row-by-row scan that returned err: on success the rows left
// in b, if any, go to fn.
func (b *Batch) last(err error, fn func(*Batch) error) error {
	if err != nil || b.N == 0 {
		return err
	}
	return fn(b)
}

// Source is one chain's event table. Scan may be called more than once
// (the unsorted path reads each table twice at most); each call streams
// every row once, in file order, to fn, which must not keep the batch.
// A Scan ends early, returning fn's error, when fn returns one.
type Source interface {
	// Name names the table in messages (a file name).
	Name() string
	// Unit names a position: "line", "row" or "entry".
	Unit() string
	// Columns lists the table's columns in file order.
	Columns() ([]ColumnInfo, error)
	// Scan streams the rows of the columns named by l.
	Scan(l Layout, fn func(*Batch) error) error
}

// errAt locates an error at a position of t: a line of a text file goes in
// the Line field, any other position in the message.
func errAt(t Source, pos int64, format string, args ...any) *table.Error {
	msg := fmt.Sprintf(format, args...)
	if t.Unit() == "line" {
		return table.Errorf(t.Name(), int(pos), 0, "%s", msg)
	}
	if pos >= 0 {
		msg = fmt.Sprintf("%s %d: %s", t.Unit(), pos, msg)
	}
	return table.Errorf(t.Name(), 0, 0, "%s", msg)
}

// errStop ends a scan early without an error of its own.
var errStop = errors.New("events: scan stopped")

// errUnsorted tells the merge that a table is not sorted by key.
var errUnsorted = errors.New("events: table not sorted by key")

// ResolveLayout checks that the named columns exist in both tables with
// usable kinds and returns the layout to scan. With no variables named,
// every numeric column common to both tables that is not a key or a cut is
// compared, in A's order.
func ResolveLayout(a, b []ColumnInfo, nameA, nameB string, keys, vars, cuts []string) (Layout, error) {
	if len(keys) == 0 {
		return Layout{}, errors.New("no key columns given")
	}
	if len(keys) > MaxKeys {
		return Layout{}, fmt.Errorf("at most %d key columns, got %d", MaxKeys, len(keys))
	}
	if len(cuts) > MaxCuts {
		return Layout{}, fmt.Errorf("at most %d cut columns, got %d", MaxCuts, len(cuts))
	}
	kinds := func(cols []ColumnInfo) map[string]Kind {
		m := make(map[string]Kind, len(cols))
		for _, c := range cols {
			m[c.Name] = c.Kind
		}
		return m
	}
	ka, kb := kinds(a), kinds(b)
	used := map[string]string{}
	check := func(role string, names []string, ok func(Kind) bool, want string) error {
		for _, n := range names {
			if prev, dup := used[n]; dup {
				return fmt.Errorf("column %q is named as %s and as %s", n, prev, role)
			}
			used[n] = role
			for _, side := range []struct {
				name string
				m    map[string]Kind
				cols []ColumnInfo
			}{{nameA, ka, a}, {nameB, kb, b}} {
				k, found := side.m[n]
				if !found {
					return table.Errorf(side.name, 0, 0, "no %s column %q (columns: %s)", role, n, columnList(side.cols))
				}
				if !ok(k) {
					return table.Errorf(side.name, 0, 0, "%s column %q holds %s values, want %s", role, n, k, want)
				}
			}
		}
		return nil
	}
	if err := check("key", keys, func(k Kind) bool { return k == Int }, "integers"); err != nil {
		return Layout{}, err
	}
	if err := check("cut", cuts, func(k Kind) bool { return k == Bool || k == Int }, "booleans or 0/1"); err != nil {
		return Layout{}, err
	}
	if len(vars) == 0 {
		for _, c := range a {
			if _, taken := used[c.Name]; !taken && c.Kind.Numeric() && kb[c.Name].Numeric() {
				vars = append(vars, c.Name)
			}
		}
	}
	if err := check("variable", vars, Kind.Numeric, "numbers or booleans"); err != nil {
		return Layout{}, err
	}
	return Layout{Keys: keys, Vars: vars, Cuts: cuts}, nil
}

func columnList(cols []ColumnInfo) string {
	names := make([]string, len(cols))
	for i, c := range cols {
		names[i] = c.Name
	}
	return strings.Join(names, ", ")
}
