package table_test

import (
	"os"
	"path/filepath"
	"testing"

	"tandem/compare"
	"tandem/compare/input"
	"tandem/compare/table"
)

// BenchmarkReadCompareStyle reads the two teams' 10⁶-bin tables of each
// number style (written by BenchmarkReadStyle into -benchdir) and compares
// them, as `tandem compare A B --value rate --error stat --error syst`
// does without printing: the share of the statistics in the whole.
func BenchmarkReadCompareStyle(b *testing.B) {
	dir := os.Getenv("TANDEM_BENCHDIR")
	if dir == "" {
		b.Skip("set TANDEM_BENCHDIR to the -benchdir of BenchmarkReadStyle")
	}
	for _, st := range []string{"g6", "g6_edges17", "shortest", "e18"} {
		b.Run(st, func(b *testing.B) {
			pa := filepath.Join(dir, st+"_1000000_a.csv")
			pb := filepath.Join(dir, st+"_1000000_b.csv")
			sel := []compare.Selection{{Value: "rate", Errors: []string{"stat", "syst"}}}
			b.ReportAllocs()
			for b.Loop() {
				ts, err := input.ReadAll(table.CSVOptions{}, pa, pb)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := compare.Tables(ts[0], ts[1], sel, 1e-9, compare.Options{Limits: compare.DefaultLimits}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
