// Package table holds the binned tables that tandem compares, seals and
// blinds, and reads them from delimited text.
//
// A table is a list of bins, each with a lower and upper edge, and any number
// of named numeric columns. Every reader in tandem (CSV and TSV here, and the
// other formats in sibling packages) produces a [Table], so the comparison,
// sealing, blinding and reporting code never sees the file format.
//
// A valid table satisfies, for every bin i:
//
//	lo_i < hi_i            (a bin has positive width)
//	hi_(i-1) <= lo_i       (bins are sorted and do not overlap; gaps are allowed)
//
// and every number is finite. Uncertainty columns must not be negative; which
// columns are uncertainties is decided by the caller through [Selection].
//
// # Numbers
//
// Every reader takes numbers in one strict form, plain decimals with an
// optional exponent ("12.5", "-3", ".5", "1.25e-3", "+7E2"), and reads them
// as the correctly rounded float64 (the value of strconv.ParseFloat).
// Hexadecimal, digit separators, NaN and infinities are refused, and so is a
// non-zero number that overflows or falls below the smallest normal float64.
//
// # Limits
//
// Every reader keeps to [Limits] on the line length, the number of columns
// and the input size, so no input makes it use unbounded memory or time.
// Text tables are read in blocks of whole lines parsed on all cores.
package table

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// Table is a binned table held column by column.
type Table struct {
	// Source names where the table came from, for messages (a file name).
	Source string
	// LoName and HiName are the names of the bin-edge columns.
	LoName, HiName string
	// Lo and Hi are the bin edges (the x edges of a 2-D table).
	Lo, Hi []float64
	// YLoName and YHiName name the y-edge columns of a 2-D table, whose
	// bins are cells [Lo, Hi) × [YLo, YHi); YLo and YHi are nil in a 1-D
	// table. See [Table.Is2D] for the order cells keep.
	YLoName, YHiName string
	YLo, YHi         []float64
	// Names lists the other columns in file order.
	Names []string
	// Cols holds the data of each column in Names, in the same order.
	Cols [][]float64
	// Lines holds the 1-based source line of each bin, when known. When it
	// is nil and FirstLine > 0, bin i is on line FirstLine + i (a file
	// without comment or blank lines among its rows).
	Lines     []int32
	FirstLine int
	// Notes are remarks of the reader a user should see (for example
	// under- and overflow left out of a histogram).
	Notes []string
}

// Len returns the number of bins.
func (t *Table) Len() int { return len(t.Lo) }

// Column returns the data of the named column, or nil.
func (t *Table) Column(name string) []float64 {
	if i := slices.Index(t.Names, name); i >= 0 {
		return t.Cols[i]
	}
	return nil
}

// line returns the source line of bin i, or 0 when unknown.
func (t *Table) line(i int) int {
	if i < len(t.Lines) {
		return int(t.Lines[i])
	}
	if t.Lines == nil && t.FirstLine > 0 {
		return t.FirstLine + i
	}
	return 0
}

// Error is a problem with an input, located as precisely as is known.
// Line and Col are 1-based; zero means unknown. Hint, when set, suggests a
// fix (such as the flag that raises a limit); it is not part of Error().
type Error struct {
	File      string
	Line, Col int
	Msg       string
	Hint      string
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
		if e.Col > 0 {
			fmt.Fprintf(&b, ":%d", e.Col)
		}
	}
	if b.Len() > 0 {
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// Errorf builds an [*Error].
func Errorf(file string, line, col int, format string, args ...any) *Error {
	return &Error{File: file, Line: line, Col: col, Msg: fmt.Sprintf(format, args...)}
}

// Validate checks the bin structure and that every number is finite. It is
// called by every reader; callers that build tables by hand call it too.
func (t *Table) Validate() error {
	n := len(t.Lo)
	if n == 0 {
		return Errorf(t.Source, 0, 0, "table has no bins")
	}
	if len(t.Hi) != n || len(t.Cols) != len(t.Names) {
		return Errorf(t.Source, 0, 0, "internal error: ragged table")
	}
	for j, c := range t.Cols {
		if len(c) != n {
			return Errorf(t.Source, 0, 0, "internal error: column %q has %d rows, want %d", t.Names[j], len(c), n)
		}
	}
	if t.HiName == t.LoName {
		return Errorf(t.Source, 0, 0, "bin-edge columns must differ, both are %q", t.LoName)
	}
	if (t.YLo != nil || t.YHi != nil) && (len(t.YLo) != n || len(t.YHi) != n) {
		return Errorf(t.Source, 0, 0, "internal error: y edges have %d and %d rows, want %d", len(t.YLo), len(t.YHi), n)
	}
	for i := 0; i < n; i++ {
		if t.Is2D() && (!finite(t.YLo[i]) || !finite(t.YHi[i])) {
			return Errorf(t.Source, t.line(i), 0, "cell %d: edges must be finite numbers", i+1)
		}
		if !finite(t.Lo[i]) || !finite(t.Hi[i]) {
			return Errorf(t.Source, t.line(i), 0, "bin %d: edges must be finite numbers", i+1)
		}
		for j, c := range t.Cols {
			if !finite(c[i]) {
				return Errorf(t.Source, t.line(i), 0, "bin %d: column %q is not a finite number", i+1, t.Names[j])
			}
		}
	}
	return t.validateBins()
}

// validateBins checks the names and the bin structure, for tables whose
// numbers are known to be finite.
func (t *Table) validateBins() error {
	n := len(t.Lo)
	if n == 0 {
		return Errorf(t.Source, 0, 0, "table has no bins")
	}
	seen := map[string]bool{t.LoName: true, t.HiName: true}
	if t.Is2D() {
		for _, name := range []string{t.YLoName, t.YHiName} {
			if seen[name] {
				return Errorf(t.Source, 0, 0, "bin-edge columns must differ, %q is named twice", name)
			}
			seen[name] = true
		}
	}
	for _, name := range t.Names {
		if seen[name] {
			return Errorf(t.Source, 0, 0, "duplicate column %q", name)
		}
		seen[name] = true
	}
	if t.Is2D() {
		return t.validateCells()
	}
	for i := 0; i < n; i++ {
		lo, hi := t.Lo[i], t.Hi[i]
		if !(lo < hi) {
			return Errorf(t.Source, t.line(i), 0, "bin %d: lower edge %s is not below upper edge %s", i+1, Format(lo), Format(hi))
		}
		if i > 0 {
			switch {
			case lo < t.Lo[i-1]:
				return Errorf(t.Source, t.line(i), 0, "bin %d: bins are not sorted (lower edge %s after %s)", i+1, Format(lo), Format(t.Lo[i-1]))
			case lo < t.Hi[i-1]:
				return Errorf(t.Source, t.line(i), 0, "bin %d: overlaps the previous bin (%s < %s)", i+1, Format(lo), Format(t.Hi[i-1]))
			}
		}
	}
	return nil
}

// edgeClose is |x - y| <= tol · max(|x|, |y|, w), written without
// math.Max, which is slow in this hot loop; all inputs are finite.
func edgeClose(x, y, w, tol float64) bool {
	if x == y {
		return true
	}
	scale := w
	if ax := math.Abs(x); ax > scale {
		scale = ax
	}
	if ay := math.Abs(y); ay > scale {
		scale = ay
	}
	return math.Abs(x-y) <= tol*scale
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// Format writes v in the shortest form that parses back to the same float64.
// It is the one number format tandem writes, so canonical encodings are
// stable.
func Format(v float64) string {
	if v == 0 {
		return "0" // also folds -0, which would hash differently
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// SameEdges reports whether two tables have the same bins, within a relative
// tolerance tol of the larger of the two edges and the bin width:
//
//	|e_a - e_b| <= tol * max(|e_a|, |e_b|, hi_a - lo_a)
//
// It returns an error naming the first bin that differs.
func SameEdges(a, b *Table, tol float64) error {
	if a.Is2D() || b.Is2D() {
		return sameCells(a, b, tol)
	}
	if a.Len() != b.Len() {
		return Errorf(b.Source, 0, 0, "has %d bins but %s has %d", b.Len(), a.Source, a.Len())
	}
	for i := range a.Lo {
		w := a.Hi[i] - a.Lo[i]
		if !edgeClose(a.Lo[i], b.Lo[i], w, tol) || !edgeClose(a.Hi[i], b.Hi[i], w, tol) {
			return Errorf(b.Source, b.line(i), 0, "bin %d: edges [%s, %s] differ from [%s, %s] in %s",
				i+1, Format(b.Lo[i]), Format(b.Hi[i]), Format(a.Lo[i]), Format(a.Hi[i]), a.Source)
		}
	}
	return nil
}

// WriteCSV writes the table as CSV: the header (the x edges, then the y
// edges of a 2-D table, then the other columns), then one row per bin, with
// every number in the shortest form that parses back exactly ([Format]).
// This is the canonical encoding that commitments and digests cover.
func (t *Table) WriteCSV(w io.Writer) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.WriteString(t.LoName)
	bw.WriteByte(',')
	bw.WriteString(t.HiName)
	if t.Is2D() {
		bw.WriteByte(',')
		bw.WriteString(t.YLoName)
		bw.WriteByte(',')
		bw.WriteString(t.YHiName)
	}
	for _, n := range t.Names {
		bw.WriteByte(',')
		bw.WriteString(n)
	}
	bw.WriteByte('\n')
	var buf []byte
	for i := range t.Lo {
		buf = appendNum(buf[:0], t.Lo[i])
		buf = append(buf, ',')
		buf = appendNum(buf, t.Hi[i])
		if t.Is2D() {
			buf = append(buf, ',')
			buf = appendNum(buf, t.YLo[i])
			buf = append(buf, ',')
			buf = appendNum(buf, t.YHi[i])
		}
		for _, c := range t.Cols {
			buf = append(buf, ',')
			buf = appendNum(buf, c[i])
		}
		buf = append(buf, '\n')
		bw.Write(buf)
	}
	return bw.Flush()
}

func appendNum(b []byte, v float64) []byte {
	if v == 0 {
		return append(b, '0')
	}
	return strconv.AppendFloat(b, v, 'g', -1, 64)
}
