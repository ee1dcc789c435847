package compare

import (
	"fmt"

	"tandem/compare/table"
)

// Comparisons of 2-D tables (see [table.Table.Is2D]) run every statistic
// over the cells exactly as over the bins of a 1-D table: the pulls, χ²
// and its p-value, the pull mean and width, the KS test of the pulls,
// the largest pull with its Šidák correction, and the criteria and Holm
// family of [AdjustFamily]. None of these depends on the order of the
// cells.
//
// The runs test does: it counts runs of equal sign along a sequence. In
// 2-D it runs along the cells in their table order, row-major with x
// fastest (the order of ROOT's global bin numbers, which every 2-D table
// keeps; see [table.Table.Is2D]). Under the hypothesis of agreement the
// signs are independent and exchangeable, so the exact runs p-value is
// valid for any fixed order chosen before looking at the data; this
// order puts neighbours in x next to each other, so it detects
// deviations coherent along x within the y bands (a shifted scale in
// one variable). Deviations coherent only along y are broken into runs
// of one cell per band and are seen by χ² and the KS test rather than by
// the runs test. The runs p-value stays in the Holm family as in 1-D;
// its criterion notes the order.

// CellsRunsNote is the note of the runs criterion of a 2-D comparison.
const CellsRunsNote = "over the cells in row-major order, x fastest"

// Cells reports whether r compares the cells of 2-D tables.
func (r *Result) Cells() bool { return r.YLo != nil }

// markCells gives r the y edges of a 2-D table t and notes the order of
// the runs test.
func markCells(r *Result, t *table.Table) {
	if !t.Is2D() {
		return
	}
	r.YLo, r.YHi = t.YLo, t.YHi
	for i := range r.Criteria {
		c := &r.Criteria[i]
		switch {
		case c.Name == CritRuns && c.Note == "":
			c.Note = CellsRunsNote
		case c.Name == CritMaxPull && !c.Pass && r.MaxPullBin >= 0:
			k := r.MaxPullBin
			c.Detail = fmt.Sprintf("cell %d (x %s to %s, y %s to %s) has pull %s", k+1,
				table.Format(r.Lo[k]), table.Format(r.Hi[k]), table.Format(r.YLo[k]), table.Format(r.YHi[k]), fmtG(r.Pulls[k]))
		}
	}
}
