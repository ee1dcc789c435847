package compare

import "tandem/compare/table"

// Tables compares the selected columns of two tables, after checking that
// their bins agree within the relative edge tolerance edgeTol. It is
// [Columns] with opt.EdgeTol set to edgeTol: each uncertainty column is its
// own error source (so 1e-200 errors keep their pulls), and the results are
// adjusted together as one family at opt.Alpha.
func Tables(a, b *table.Table, sels []Selection, edgeTol float64, opt Options) ([]*Result, error) {
	opt.EdgeTol = edgeTol
	return Columns(a, b, sels, opt)
}

// Selection is re-exported so callers of Tables need not import table.
type Selection = table.Selection
