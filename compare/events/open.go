package events

import "strings"

// OpenSource opens an event table by its name: a ROOT tree (file.root:tree,
// through trees, or RootTrees when trees is zero), a Parquet file
// (.parquet, .pq) or else CSV/TSV.
func OpenSource(name string, trees TreeFuncs) (Source, error) {
	lower := strings.ToLower(name)
	switch {
	case IsTreeSpec(name):
		if trees.Read == nil || trees.Columns == nil {
			trees = RootTrees
		}
		return OpenTree(name, trees)
	case strings.HasSuffix(lower, ".parquet") || strings.HasSuffix(lower, ".pq"):
		return OpenParquet(name)
	}
	return OpenCSV(name)
}
