package table

import (
	"slices"
	"strings"
)

// Is2D reports whether t is a 2-D table: its bins are cells
// [Lo, Hi) × [YLo, YHi).
//
// The cells of a 2-D table are in row-major order with x fastest, the
// order of ROOT's global bin numbers: they form bands of equal y range
// (the same YLo and YHi), the bands sorted by y and not overlapping
// (a band starts at or above the upper y edge of the band before it), and
// within a band the cells sorted by x and not overlapping, as the bins of
// a 1-D table. Bands may have different x bins (a double-differential
// result often bins energy differently in each angle slice); a cell that
// would straddle two bands is refused. So cells never overlap, and a
// check of each cell against the one before it proves it in one pass.
func (t *Table) Is2D() bool { return t.YLo != nil }

// SplitEdges cuts an --edges value into its edge-column names: "LO,HI"
// for a 1-D table, "XLO,XHI,YLO,YHI" for a 2-D one. Names are trimmed of
// spaces; every name must be non-empty and different from the others.
// ok is false otherwise; the caller words the message.
func SplitEdges(s string) (names []string, ok bool) {
	names = strings.Split(s, ",")
	if len(names) != 2 && len(names) != 4 {
		return nil, false
	}
	for i := range names {
		names[i] = strings.TrimSpace(names[i])
		if names[i] == "" || slices.Contains(names[:i], names[i]) {
			return nil, false
		}
	}
	return names, true
}

// takeY moves the y-edge columns named by opt out of t.Names into t.YLo
// and t.YHi, making t a 2-D table. It does nothing when opt names no y
// edges.
func (t *Table) takeY(opt CSVOptions) error {
	if opt.YLo == "" && opt.YHi == "" {
		return nil
	}
	if opt.YLo == "" || opt.YHi == "" || opt.YLo == opt.YHi {
		return Errorf(t.Source, 0, 0, "a 2-D table needs two different y-edge columns, got %q and %q", opt.YLo, opt.YHi)
	}
	for _, name := range []string{opt.YLo, opt.YHi} {
		if name == t.LoName || name == t.HiName {
			return Errorf(t.Source, 0, 0, "column %q names both an x and a y edge", name)
		}
		if !slices.Contains(t.Names, name) {
			e := Errorf(t.Source, t.headerLine(), 0, "no y-edge column %q (columns: %s)", name, strings.Join(append([]string{t.LoName, t.HiName}, t.Names...), ", "))
			e.Hint = "name the edge columns with --edges XLO,XHI,YLO,YHI"
			return e
		}
	}
	t.YLoName, t.YHiName = opt.YLo, opt.YHi
	t.YLo, t.YHi = t.Column(opt.YLo), t.Column(opt.YHi)
	names, cols := t.Names[:0:0], t.Cols[:0:0]
	for k, n := range t.Names {
		if n != opt.YLo && n != opt.YHi {
			names, cols = append(names, n), append(cols, t.Cols[k])
		}
	}
	t.Names, t.Cols = names, cols
	return nil
}

// headerLine is the line of the column names when known (the line before
// the first row of a file without blank lines), else 0.
func (t *Table) headerLine() int {
	if l := t.line(0); l > 1 {
		return l - 1
	}
	return 0
}

// validateCells checks the cell structure described at [Table.Is2D].
func (t *Table) validateCells() error {
	for i := range t.Lo {
		xlo, xhi, ylo, yhi := t.Lo[i], t.Hi[i], t.YLo[i], t.YHi[i]
		switch {
		case !(xlo < xhi):
			return Errorf(t.Source, t.line(i), 0, "cell %d: lower x edge %s is not below upper x edge %s", i+1, Format(xlo), Format(xhi))
		case !(ylo < yhi):
			return Errorf(t.Source, t.line(i), 0, "cell %d: lower y edge %s is not below upper y edge %s", i+1, Format(ylo), Format(yhi))
		case i == 0:
			continue
		}
		pylo, pyhi := t.YLo[i-1], t.YHi[i-1]
		if ylo == pylo && yhi == pyhi {
			// same band: the 1-D rule in x
			switch {
			case xlo < t.Lo[i-1]:
				return Errorf(t.Source, t.line(i), 0, "cell %d: cells of a y band are not sorted by x (lower x edge %s after %s); cells go in rows of equal y, x fastest", i+1, Format(xlo), Format(t.Lo[i-1]))
			case xlo < t.Hi[i-1]:
				return Errorf(t.Source, t.line(i), 0, "cell %d: overlaps the previous cell in x (%s < %s)", i+1, Format(xlo), Format(t.Hi[i-1]))
			}
			continue
		}
		switch {
		case ylo == pylo:
			return Errorf(t.Source, t.line(i), 0, "cell %d: y range [%s, %s] starts with the cell before it, [%s, %s], but ends elsewhere; cells of one band share their y edges", i+1, Format(ylo), Format(yhi), Format(pylo), Format(pyhi))
		case ylo < pylo:
			return Errorf(t.Source, t.line(i), 0, "cell %d: cells are not sorted by y (y range [%s, %s] after [%s, %s]); cells go in rows of equal y, x fastest", i+1, Format(ylo), Format(yhi), Format(pylo), Format(pyhi))
		case ylo < pyhi:
			return Errorf(t.Source, t.line(i), 0, "cell %d: y range [%s, %s] overlaps the band [%s, %s] before it; cells of one band share their y edges", i+1, Format(ylo), Format(yhi), Format(pylo), Format(pyhi))
		}
	}
	return nil
}

// sameCells is [SameEdges] for 2-D tables: the same cells in the same
// order, each edge within the tolerance (the x width scales the x edges,
// the y width the y edges). Both tables keep the order of [Table.Is2D], so
// a cell missing or extra in one shows at the first place they part.
func sameCells(a, b *Table, tol float64) error {
	if a.Is2D() != b.Is2D() {
		two, one := a, b
		if b.Is2D() {
			two, one = b, a
		}
		return Errorf(b.Source, 0, 0, "%s is a 2-D table (x and y edges) but %s is 1-D", two.Source, one.Source)
	}
	n := min(a.Len(), b.Len())
	for i := 0; i < n; i++ {
		wx, wy := a.Hi[i]-a.Lo[i], a.YHi[i]-a.YLo[i]
		if !edgeClose(a.Lo[i], b.Lo[i], wx, tol) || !edgeClose(a.Hi[i], b.Hi[i], wx, tol) ||
			!edgeClose(a.YLo[i], b.YLo[i], wy, tol) || !edgeClose(a.YHi[i], b.YHi[i], wy, tol) {
			return Errorf(b.Source, b.line(i), 0, "cell %d: [%s, %s] × [%s, %s] differs from [%s, %s] × [%s, %s] in %s",
				i+1, Format(b.Lo[i]), Format(b.Hi[i]), Format(b.YLo[i]), Format(b.YHi[i]),
				Format(a.Lo[i]), Format(a.Hi[i]), Format(a.YLo[i]), Format(a.YHi[i]), a.Source)
		}
	}
	if a.Len() != b.Len() {
		return Errorf(b.Source, 0, 0, "has %d cells but %s has %d", b.Len(), a.Source, a.Len())
	}
	return nil
}
