package rootfile

import (
	"path/filepath"
	"testing"
)

// Benchmarks of the child's cost: go test ./compare/rootfile -run '^$'
// -bench . -benchtime 20x (the figures in /work/notes/rootfile.md came
// from interleaved runs of this command).

// BenchmarkReadHist reads one histogram through the child and in process.
func BenchmarkReadHist(b *testing.B) {
	spec := gohep(b, gaussH1) + ":h1d"
	b.Run("child", func(b *testing.B) {
		for b.Loop() {
			if _, err := Read(spec); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("in-process", func(b *testing.B) {
		for b.Loop() {
			if _, err := readHist(spec); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkReadTree streams 200,000 entries of 5 columns (two float, two
// integer and a bool branch of a groot-written tree).
func BenchmarkReadTree(b *testing.B) {
	const n = 200_000
	p := filepath.Join(b.TempDir(), "big.root")
	if err := writeTree(p, "", n, func(int, *event) {}); err != nil {
		b.Fatal(err)
	}
	cols := []string{"e", "pt", "evt", "run", "pass"}
	count := func(rows *int) func([]float64) error {
		return func([]float64) error { *rows++; return nil }
	}
	for _, c := range []struct {
		name string
		read func(fn func([]float64) error) error
	}{
		{"child", func(fn func([]float64) error) error { return ReadTree(p+":events", cols, fn) }},
		{"in-process", func(fn func([]float64) error) error {
			return readTree(p+":events", cols, func(rows []float64) error {
				for i := 0; i < len(rows); i += len(cols) {
					fn(rows[i : i+len(cols)])
				}
				return nil
			})
		}},
	} {
		b.Run(c.name, func(b *testing.B) {
			for b.Loop() {
				rows := 0
				if err := c.read(count(&rows)); err != nil || rows != n {
					b.Fatal(rows, err)
				}
			}
			b.ReportMetric(float64(n*b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}
