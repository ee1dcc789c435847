package compare

import (
	"bufio"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"tandem/compare/table"
)

var benchDir = flag.String("benchdir", "", "keep the 10⁶-bin benchmark tables in this folder (for the pandas comparison)")

// benchTables writes two agreeing tables of n bins (fixed seed) unless
// they exist, and returns their paths.
func benchTables(b *testing.B, n int) (string, string) {
	dir := *benchDir
	if dir == "" {
		dir = b.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		b.Fatal(err)
	}
	pa, pb := filepath.Join(dir, fmt.Sprintf("a_%d.csv", n)), filepath.Join(dir, fmt.Sprintf("b_%d.csv", n))
	if _, err := os.Stat(pb); err == nil {
		return pa, pb
	}
	rng := rand.New(rand.NewPCG(7, 7))
	for _, p := range []string{pa, pb} {
		f, err := os.Create(p)
		if err != nil {
			b.Fatal(err)
		}
		w := bufio.NewWriter(f)
		fmt.Fprintln(w, "lo,hi,y,stat,syst")
		for i := 0; i < n; i++ {
			truth := 1000 * math.Exp(-float64(i)/float64(n))
			stat, syst := math.Sqrt(truth), 0.01*truth
			y := truth + math.Sqrt(stat*stat+syst*syst)*rng.NormFloat64()
			fmt.Fprintf(w, "%d,%d,%.6f,%.6f,%.6f\n", i, i+1, y, stat, syst)
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
		f.Close()
	}
	return pa, pb
}

// BenchmarkCompareMillion reads two 10⁶-bin CSV tables and compares them:
// pulls, χ², p-value, pull moments, KS (asymptotic above 10⁴ bins), runs
// test and the largest pull. Compare with testdata/reference/bench_pandas.py
// on the same files (see README, Performance).
func BenchmarkCompareMillion(b *testing.B) { benchReadCompare(b, 1_000_000) }

// BenchmarkCompareTenth is the same at 10⁵ bins: memory per operation
// should be a tenth (memory proportional to the bins).
func BenchmarkCompareTenth(b *testing.B) { benchReadCompare(b, 100_000) }

func benchReadCompare(b *testing.B, n int) {
	pa, pb := benchTables(b, n)
	sel := []Selection{{Value: "y", Errors: []string{"stat", "syst"}}}
	b.ReportAllocs()
	for b.Loop() {
		ts, err := readBoth(pa, pb)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := Tables(ts[0], ts[1], sel, 1e-9, Options{Limits: DefaultLimits}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkCompareOnly times the statistics alone on 10⁶ bins.
func BenchmarkCompareOnly(b *testing.B) {
	pa, pb := benchTables(b, 1_000_000)
	ta, _ := table.ReadFile(pa, table.CSVOptions{})
	tb, _ := table.ReadFile(pb, table.CSVOptions{})
	sel := []Selection{{Value: "y", Errors: []string{"stat", "syst"}}}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Tables(ta, tb, sel, 1e-9, Options{Limits: DefaultLimits}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkColumnsOnly times the statistics alone on 10⁶ bins with the
// errors as two sources, each with its own declared correlation.
func BenchmarkColumnsOnly(b *testing.B) {
	pa, pb := benchTables(b, 1_000_000)
	ta, _ := table.ReadFile(pa, table.CSVOptions{})
	tb, _ := table.ReadFile(pb, table.CSVOptions{})
	sel := []Selection{{Value: "y", Errors: []string{"stat", "syst"}}}
	opt := Defaults()
	opt.Correlations = map[string]Rho{"stat": Number(0), "syst": Number(1)}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Columns(ta, tb, sel, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// readBoth reads two CSV tables concurrently, as the command line does.
func readBoth(pa, pb string) ([]*table.Table, error) {
	var ta, tb *table.Table
	var ea, eb error
	done := make(chan bool)
	go func() { ta, ea = table.ReadFile(pa, table.CSVOptions{}); done <- true }()
	tb, eb = table.ReadFile(pb, table.CSVOptions{})
	<-done
	if ea != nil {
		return nil, ea
	}
	return []*table.Table{ta, tb}, eb
}
