package table

import (
	"bufio"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

var benchDir = flag.String("benchdir", "", "write the 10⁶-bin tables of every number style into this folder and keep them (for the whole-command comparison with testdata/reference/bench_pandas.py)")

// numberStyle is a way of writing numbers that real table writers use.
type numberStyle struct {
	name         string
	edges, value func(float64) string
}

func gFormat(prec int) func(float64) string {
	return func(v float64) string { return strconv.FormatFloat(v, 'g', prec, 64) }
}

var numberStyles = []numberStyle{
	// C printf's "%g" default (six significant digits) everywhere.
	{"g6", gFormat(6), gFormat(6)},
	// Values "%.6g", bin edges written to round-trip ("%.17g").
	{"g6_edges17", gFormat(17), gFormat(6)},
	// The shortest round-trip form (Python repr, Go %v): up to 17 digits.
	{"shortest", gFormat(-1), gFormat(-1)},
	// numpy.savetxt's default "%.18e": 19 significant digits.
	{"e18", func(v float64) string { return strconv.FormatFloat(v, 'e', 18, 64) },
		func(v float64) string { return strconv.FormatFloat(v, 'e', 18, 64) }},
}

// styleTables writes the two teams' tables of n bins in style st (fixed
// seeds; columns lo, hi, rate, stat, syst) unless they exist, and returns
// their paths. The bins are log-spaced over five decades, the rates follow
// a falling spectrum with √N statistical and 2 % systematic errors, and the
// two teams' rates scatter independently about the same truth, so the
// tables agree.
func styleTables(b *testing.B, st numberStyle, n int) (string, string) {
	dir := *benchDir
	if dir == "" {
		dir = b.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		b.Fatal(err)
	}
	pa := filepath.Join(dir, fmt.Sprintf("%s_%d_a.csv", st.name, n))
	pb := filepath.Join(dir, fmt.Sprintf("%s_%d_b.csv", st.name, n))
	if _, err := os.Stat(pb); err == nil {
		return pa, pb
	}
	for k, p := range []string{pa, pb} {
		rng := rand.New(rand.NewPCG(uint64(k)+1, 17))
		f, err := os.Create(p)
		if err != nil {
			b.Fatal(err)
		}
		w := bufio.NewWriterSize(f, 1<<20)
		w.WriteString("lo,hi,rate,stat,syst\n")
		for i := 0; i < n; i++ {
			lo := math.Pow(10, 5*float64(i)/float64(n))
			hi := math.Pow(10, 5*float64(i+1)/float64(n))
			truth := 1e4/lo + 10
			stat, syst := math.Sqrt(truth), 0.02*truth
			rate := truth + math.Hypot(stat, syst)*rng.NormFloat64()
			w.WriteString(st.edges(lo) + "," + st.edges(hi) + "," + st.value(rate) + "," + st.value(stat) + "," + st.value(syst) + "\n")
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
		if err := f.Close(); err != nil {
			b.Fatal(err)
		}
	}
	return pa, pb
}

// BenchmarkReadStyle reads one 10⁶-bin table (5 columns) of each number
// style from a file, on all cores:
//
//	go test ./compare/table -run XXX -bench ReadStyle -benchmem -benchdir /tmp/bench
func BenchmarkReadStyle(b *testing.B) {
	for _, st := range numberStyles {
		b.Run(st.name, func(b *testing.B) {
			pa, _ := styleTables(b, st, 1_000_000)
			fi, err := os.Stat(pa)
			if err != nil {
				b.Fatal(err)
			}
			b.SetBytes(fi.Size())
			b.ReportAllocs()
			for b.Loop() {
				if _, err := ReadFile(pa, CSVOptions{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkParseNumber times the number parser alone on fields of each
// style (one field per call, no table around it).
func BenchmarkParseNumber(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	vals := make([]float64, 4096)
	for i := range vals {
		vals[i] = math.Pow(10, rng.Float64()*10-3)
	}
	for _, st := range numberStyles {
		fields := make([][]byte, len(vals))
		for i, v := range vals {
			fields[i] = []byte(st.value(v) + ",")
		}
		b.Run(st.name, func(b *testing.B) {
			i := 0
			for b.Loop() {
				f := fields[i%len(fields)]
				if _, _, ok := scanField(f, 0, ','); !ok {
					if _, msg := parseNumber(f[:len(f)-1]); msg != "" {
						b.Fatal(msg)
					}
				}
				i++
			}
		})
	}
}
