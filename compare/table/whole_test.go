package table_test

import (
	"flag"
	"os"
	"path/filepath"
	"testing"

	"tandem/compare"
	"tandem/compare/input"
	"tandem/compare/table"
)

// BenchmarkReadCompareStyle reads the two teams' 10⁶-bin tables of each
// number style (written by BenchmarkReadStyle into the same -benchdir) and
// compares them, as `tandem compare A B --value rate --error stat --error
// syst` does without printing:
//
//	go test ./compare/table -run XXX -bench 'ReadStyle|ReadCompareStyle' -benchmem -benchdir /tmp/bench
func BenchmarkReadCompareStyle(b *testing.B) {
	dir := flag.Lookup("benchdir").Value.String()
	if dir == "" {
		b.Skip("needs -benchdir with the tables of BenchmarkReadStyle")
	}
	for _, st := range []string{"g6", "g6_edges17", "shortest", "e18"} {
		b.Run(st, func(b *testing.B) {
			pa := filepath.Join(dir, st+"_1000000_a.csv")
			pb := filepath.Join(dir, st+"_1000000_b.csv")
			if _, err := os.Stat(pb); err != nil {
				b.Skip("run BenchmarkReadStyle with this -benchdir first")
			}
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
