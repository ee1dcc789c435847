package report

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"testing"

	"tandem/compare"
	"tandem/compare/table"
)

// benchSeries is a pair of n-bin series in the shape of a campaign's
// counting tables: truth 1000 + 50·bin, Gaussian noise of √truth on each
// side, the uncertainty √truth rounded to two decimals.
func benchSeries(rng *rand.Rand, n int) (*table.Series, *table.Series) {
	mk := func() *table.Series {
		s := &table.Series{Column: "counts", Lo: make([]float64, n), Hi: make([]float64, n), V: make([]float64, n), Down: make([]float64, n)}
		for k := range n {
			truth := 1000 + 50*float64(k%40)
			s.Lo[k], s.Hi[k] = float64(k), float64(k+1)
			s.V[k] = math.Round(truth + rng.NormFloat64()*math.Sqrt(truth))
			s.Down[k] = math.Round(math.Sqrt(truth)*100) / 100
		}
		s.Up = s.Down
		return s
	}
	return mk(), mk()
}

// benchCampaignSummary is a blinded campaign of n observables × 2 teams ×
// 20 bins, as blind/campaign's BenchmarkCampaign builds it, with blinded
// values.
func benchCampaignSummary(b *testing.B, n int) *Summary {
	b.Helper()
	rng := rand.New(rand.NewPCG(11, 500))
	s := &Summary{Title: "campaign bench (blinded)", Campaign: "bench",
		Notes: []string{"campaign bench is blinded; 1503 ledger entries", "no valid sign-offs yet"}}
	for i := range n {
		a, bb := benchSeries(rng, 20)
		// blinded as the campaign blinds: one affine map per observable,
		// scale in [0.5, 2], shift in [-2000, 2000]
		scale, shift := 0.5+1.5*rng.Float64(), -2000+4000*rng.Float64()
		for _, s := range []*table.Series{a, bb} {
			for k := range s.V {
				s.V[k] = s.V[k]*scale + shift
				s.Down[k] *= scale
			}
		}
		r, err := compare.Series(a, bb, compare.Options{Correlation: 0.5, Limits: compare.DefaultLimits})
		if err != nil {
			b.Fatal(err)
		}
		s.Entries = append(s.Entries, Entry{Observable: fmt.Sprintf("obs%03d", i), Teams: [2]string{"heron", "otter"}, Blinded: true, Result: r})
	}
	return s
}

// reportCPU adds the process's CPU time per operation since start to b's
// figures: on a shared machine it moves less with the load than the wall
// time does (it includes the garbage collector's work on other threads).
func reportCPU(b *testing.B, start int64, ok bool) {
	if end, ok2 := cpuTime(); ok && ok2 && b.N > 0 {
		b.ReportMetric(float64(end-start)/1e6/float64(b.N), "cpu-ms/op")
	}
}

// renderAll renders s in every format, each into a new buffer as
// `report` and the campaign write them, and returns the total size.
func renderAll(b *testing.B, s *Summary) int {
	size := 0
	for _, f := range Formats {
		var buf bytes.Buffer
		if err := Render(&buf, f, s, Style{}); err != nil {
			b.Fatal(err)
		}
		size += buf.Len()
	}
	return size
}

// BenchmarkRenderAll renders every format of a campaign of 500
// observables × 20 bins, and each format alone; it reports the bytes
// written.
//
//	go test -run '^$' -bench RenderAll -benchtime 10x ./report
func BenchmarkRenderAll(b *testing.B) {
	s := benchCampaignSummary(b, 500)
	benchFormats(b, s)
}

// BenchmarkRenderTable1e5 renders every format of one table-mode
// comparison of 10⁵ bins (decimated figures, the 500 worst bins in the
// HTML table, 200 in text and Markdown, every bin in JSON).
//
//	go test -run '^$' -bench RenderTable1e5 -benchtime 10x ./report
func BenchmarkRenderTable1e5(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 100000))
	a, bb := benchSeries(rng, 100_000)
	r, err := compare.Series(a, bb, compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		b.Fatal(err)
	}
	r.LabelA, r.LabelB = "heron/spectrum.csv", "otter/spectrum.csv"
	s := &Summary{Entries: []Entry{{Observable: "spectrum", Files: [2]string{"heron/spectrum.csv", "otter/spectrum.csv"}, XLabel: "energy [GeV]", Result: r}}}
	benchFormats(b, s)
}

// benchFormats times every format of s together ("all", into new buffers
// as the campaign writes them) and each on its own.
func benchFormats(b *testing.B, s *Summary) {
	b.Run("all", func(b *testing.B) {
		size := 0
		start, ok := cpuTime()
		for b.Loop() {
			size = renderAll(b, s)
		}
		reportCPU(b, start, ok)
		b.ReportMetric(float64(size), "bytes")
	})
	for _, f := range Formats {
		b.Run(f, func(b *testing.B) {
			var buf bytes.Buffer
			start, ok := cpuTime()
			for b.Loop() {
				buf.Reset()
				if err := Render(&buf, f, s, Style{}); err != nil {
					b.Fatal(err)
				}
			}
			reportCPU(b, start, ok)
			b.ReportMetric(float64(buf.Len()), "bytes")
		})
	}
}

// BenchmarkJSONMillion writes the JSON report of one comparison of 10⁶
// bins to a plain writer that drops it, as the command streams it to a
// file: the cost of the report alone, beside the text report of the same
// comparison.
//
//	go test -run '^$' -bench JSONMillion -benchtime 5x -benchmem ./report
func BenchmarkJSONMillion(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 1_000_000))
	a, bb := benchSeries(rng, 1_000_000)
	// values as the 10⁶-bin tables of the README hold them: six
	// significant digits, log-spaced edges with 17
	for i := range a.V {
		a.Lo[i], a.Hi[i] = math.Pow(10, float64(i)/2e5), math.Pow(10, float64(i+1)/2e5)
		bb.Lo[i], bb.Hi[i] = a.Lo[i], a.Hi[i]
	}
	r, err := compare.Series(a, bb, compare.Options{Limits: compare.DefaultLimits})
	if err != nil {
		b.Fatal(err)
	}
	s := &Summary{Entries: []Entry{{Observable: "spectrum", Result: r}}}
	for _, f := range []string{"text", "json"} {
		b.Run(f, func(b *testing.B) {
			w := &countingWriter{w: io.Discard}
			start, ok := cpuTime()
			for b.Loop() {
				if err := Render(w, f, s, Style{}); err != nil {
					b.Fatal(err)
				}
			}
			reportCPU(b, start, ok)
		})
	}
}
