package events

import "strings"

// Open opens an event table by its name: a ROOT tree (file.root:tree,
// through trees), a Parquet file (.parquet, .pq) or else CSV/TSV.
func Open(name string, trees TreeFuncs) (Table, error) {
	lower := strings.ToLower(name)
	switch {
	case IsTreeSpec(name):
		if trees.Read == nil || trees.Columns == nil {
			return nil, errNoTrees(name)
		}
		return OpenTree(name, trees)
	case strings.HasSuffix(lower, ".parquet") || strings.HasSuffix(lower, ".pq"):
		return OpenParquet(name)
	}
	return OpenCSV(name)
}
