package table

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// Series is one value column of a table with its combined uncertainty,
// ready for comparison.
type Series struct {
	Source string
	Column string
	Lo, Hi []float64
	V      []float64
	// Down and Up are the uncertainties below and above each value. For
	// symmetric errors they are the same slice.
	Down, Up []float64
}

// Asymmetric reports whether the series has different errors below and above.
func (s *Series) Asymmetric() bool {
	if len(s.Down) == 0 || &s.Down[0] == &s.Up[0] {
		return false
	}
	return !slices.Equal(s.Down, s.Up)
}

// Selection names the columns of a comparison: one value column and the
// uncertainty columns that are added in quadrature to form its error.
type Selection struct {
	Value string
	// Errors are symmetric uncertainty columns.
	Errors []string
	// Minus and Plus are asymmetric uncertainty columns, below and above.
	Minus, Plus []string
}

// Suffixes that mark a column as an uncertainty of the column it extends:
// value column "flux" has symmetric errors "flux_err", "flux_stat",
// "flux_syst", "flux_sys" and asymmetric "flux_err_minus"/"flux_err_plus".
var (
	symSuffixes  = []string{"_err", "_stat", "_syst", "_sys"}
	minusSuffix  = "_err_minus"
	plusSuffix   = "_err_plus"
	bareErrNames = []string{"err", "stat", "syst", "sys"}
)

func isErrorName(has func(string) bool, name string) bool {
	if slices.Contains(bareErrNames, name) || name == "err_minus" || name == "err_plus" {
		return true
	}
	for _, suf := range allSuffixes {
		if base, ok := strings.CutSuffix(name, suf); ok && base != "" && has(base) {
			return true
		}
	}
	return false
}

var allSuffixes = append(slices.Clone(symSuffixes), minusSuffix, plusSuffix)

// columnSet returns a constant-time test for the columns of t, so that
// choosing the selections costs time linear in the number of columns.
func columnSet(t *Table) func(string) bool {
	set := make(map[string]bool, len(t.Names))
	for _, n := range t.Names {
		set[n] = true
	}
	return func(n string) bool { return set[n] }
}

// DefaultSelections chooses the comparisons when the user names no columns:
// every column that is not an uncertainty is a value, and its uncertainties
// are the columns named after it (see the suffixes above). When there is a
// single value column, bare "err", "stat", "syst" and "sys" columns (and
// "err_minus"/"err_plus") belong to it.
func DefaultSelections(t *Table) []Selection {
	has := columnSet(t)
	var values []string
	for _, n := range t.Names {
		if !isErrorName(has, n) {
			values = append(values, n)
		}
	}
	sels := make([]Selection, 0, len(values))
	for _, v := range values {
		sels = append(sels, conventional(has, v, len(values) == 1))
	}
	return sels
}

// ConventionalSelection returns the selection for value column v using the
// naming convention for its uncertainties; bare names are included when
// bare is true.
func ConventionalSelection(t *Table, v string, bare bool) Selection {
	return conventional(columnSet(t), v, bare)
}

func conventional(has func(string) bool, v string, bare bool) Selection {
	s := Selection{Value: v}
	for _, suf := range symSuffixes {
		if has(v + suf) {
			s.Errors = append(s.Errors, v+suf)
		}
	}
	if has(v+minusSuffix) && has(v+plusSuffix) {
		s.Minus, s.Plus = []string{v + minusSuffix}, []string{v + plusSuffix}
	}
	if bare {
		for _, n := range bareErrNames {
			if has(n) {
				s.Errors = append(s.Errors, n)
			}
		}
		if has("err_minus") && has("err_plus") {
			s.Minus, s.Plus = append(s.Minus, "err_minus"), append(s.Plus, "err_plus")
		}
	}
	return s
}

// Series builds the series for sel, checking that every named column exists
// and that no uncertainty is negative.
func (t *Table) Series(sel Selection) (*Series, error) {
	v := t.Column(sel.Value)
	if v == nil {
		return nil, Errorf(t.Source, 0, 0, "no value column %q (columns: %s)", sel.Value, strings.Join(t.Names, ", "))
	}
	if len(sel.Minus) != len(sel.Plus) {
		return nil, fmt.Errorf("internal error: %d minus and %d plus error columns", len(sel.Minus), len(sel.Plus))
	}
	n := t.Len()
	sym := make([]float64, n)
	if err := t.addSquares(sym, sel.Errors); err != nil {
		return nil, err
	}
	s := &Series{Source: t.Source, Column: sel.Value, Lo: t.Lo, Hi: t.Hi, V: v}
	if len(sel.Minus) == 0 {
		for i := range sym {
			sym[i] = math.Sqrt(sym[i])
		}
		s.Down, s.Up = sym, sym
		return s, nil
	}
	down, up := slices.Clone(sym), sym
	if err := t.addSquares(down, sel.Minus); err != nil {
		return nil, err
	}
	if err := t.addSquares(up, sel.Plus); err != nil {
		return nil, err
	}
	for i := range up {
		down[i], up[i] = math.Sqrt(down[i]), math.Sqrt(up[i])
	}
	s.Down, s.Up = down, up
	return s, nil
}

func (t *Table) addSquares(acc []float64, cols []string) error {
	for _, name := range cols {
		c := t.Column(name)
		if c == nil {
			return Errorf(t.Source, 0, 0, "no uncertainty column %q (columns: %s)", name, strings.Join(t.Names, ", "))
		}
		for i, e := range c {
			if e < 0 {
				return Errorf(t.Source, t.line(i), 0, "bin %d: uncertainty %q is negative (%s)", i+1, name, Format(e))
			}
			acc[i] += e * e
		}
	}
	return nil
}
