package events

import (
	"bufio"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/compress"
	"github.com/apache/arrow-go/v18/parquet/file"
	"github.com/apache/arrow-go/v18/parquet/schema"
)

var benchDir = flag.String("benchdir", "", "keep the benchmark tables in this folder (for the pandas script)")
var benchRows = flag.Int("benchrows", 1_000_000, "events per benchmark table")

// benchTables generates the benchmark tables: A has events 2i, B 95 % of
// them plus as many odd-numbered events of its own, both sorted by
// (run, event); five float variables, equal in B except 1 % perturbed.
func benchTables(n int, fn func(side int, run, event int64, v *[5]float64)) {
	rng := rand.New(rand.NewPCG(1, 2))
	var va, vb [5]float64
	for i := 0; i < n; i++ {
		run, ev := int64(1+i/100000), int64(2*i)
		for k := range va {
			va[k] = float64(rng.IntN(2_000_000_000)) / 1e6
		}
		fn(0, run, ev, &va)
		if rng.IntN(20) != 0 {
			vb = va
			if rng.IntN(100) == 0 {
				vb[2] += 1e-6
			}
			fn(1, run, ev, &vb)
		} else {
			for k := range vb {
				vb[k] = float64(rng.IntN(2_000_000_000)) / 1e6
			}
			fn(1, run, ev+1, &vb)
		}
	}
}

func benchFiles(b *testing.B, n int) (dir string) {
	dir = *benchDir
	if dir == "" {
		dir = b.TempDir()
	}
	csvA := filepath.Join(dir, fmt.Sprintf("events_a_%d.csv", n))
	if _, err := os.Stat(csvA); err == nil {
		return dir
	}
	var ws [2]*bufio.Writer
	var fs [2]*os.File
	for i, s := range []string{"a", "b"} {
		f, err := os.Create(filepath.Join(dir, fmt.Sprintf("events_%s_%d.csv", s, n)))
		if err != nil {
			b.Fatal(err)
		}
		fs[i], ws[i] = f, bufio.NewWriterSize(f, 1<<20)
		ws[i].WriteString("run,event,v0,v1,v2,v3,v4\n")
	}
	cols := [2][7][]float64{}
	var line []byte
	benchTables(n, func(side int, run, ev int64, v *[5]float64) {
		line = strconv.AppendInt(line[:0], run, 10)
		line = append(line, ',')
		line = strconv.AppendInt(line, ev, 10)
		for _, x := range v {
			line = append(line, ',')
			line = strconv.AppendFloat(line, x, 'f', 6, 64)
		}
		line = append(line, '\n')
		ws[side].Write(line)
		cols[side][0] = append(cols[side][0], float64(run))
		cols[side][1] = append(cols[side][1], float64(ev))
		for k, x := range v {
			cols[side][2+k] = append(cols[side][2+k], x)
		}
	})
	for i := range ws {
		ws[i].Flush()
		fs[i].Close()
		writeBenchParquet(b, filepath.Join(dir, fmt.Sprintf("events_%s_%d.parquet", "ab"[i:i+1], n)), cols[i])
	}
	return dir
}

func writeBenchParquet(b *testing.B, path string, cols [7][]float64) {
	names := []string{"run", "event", "v0", "v1", "v2", "v3", "v4"}
	var fields schema.FieldList
	for i, n := range names {
		if i < 2 {
			fields = append(fields, schema.NewInt64Node(n, parquet.Repetitions.Required, -1))
		} else {
			fields = append(fields, schema.NewFloat64Node(n, parquet.Repetitions.Required, -1))
		}
	}
	root, err := schema.NewGroupNode("schema", parquet.Repetitions.Required, fields, -1)
	if err != nil {
		b.Fatal(err)
	}
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	w := file.NewParquetWriter(f, root, file.WithWriterProps(parquet.NewWriterProperties(parquet.WithCompression(compress.Codecs.Snappy), parquet.WithDictionaryDefault(false))))
	const group = 1 << 20
	for lo := 0; lo < len(cols[0]); lo += group {
		hi := min(lo+group, len(cols[0]))
		rg := w.AppendRowGroup()
		for i := range names {
			cw, err := rg.NextColumn()
			if err != nil {
				b.Fatal(err)
			}
			if i < 2 {
				ints := make([]int64, hi-lo)
				for j := range ints {
					ints[j] = int64(cols[i][lo+j])
				}
				_, err = cw.(*file.Int64ColumnChunkWriter).WriteBatch(ints, nil, nil)
			} else {
				_, err = cw.(*file.Float64ColumnChunkWriter).WriteBatch(cols[i][lo:hi], nil, nil)
			}
			if err != nil {
				b.Fatal(err)
			}
			cw.Close()
		}
		rg.Close()
	}
	if err := w.Close(); err != nil {
		b.Fatal(err)
	}
}

func benchSync(b *testing.B, ext string) {
	n := *benchRows
	dir := benchFiles(b, n)
	b.ResetTimer()
	for b.Loop() {
		ta, err := Open(filepath.Join(dir, fmt.Sprintf("events_a_%d.%s", n, ext)), TreeFuncs{})
		if err != nil {
			b.Fatal(err)
		}
		tb, err := Open(filepath.Join(dir, fmt.Sprintf("events_b_%d.%s", n, ext)), TreeFuncs{})
		if err != nil {
			b.Fatal(err)
		}
		s, err := Sync(ta, tb, Options{Layout: Layout{Keys: []string{"run", "event"}}})
		if err != nil {
			b.Fatal(err)
		}
		if s.Common < int64(n)*9/10 {
			b.Fatalf("common %d", s.Common)
		}
	}
}

// go test ./compare/events -run XXX -bench Sync -benchmem -benchdir /tmp/evbench [-benchrows 10000000]
func BenchmarkSyncCSV(b *testing.B)     { benchSync(b, "csv") }
func BenchmarkSyncParquet(b *testing.B) { benchSync(b, "parquet") }

// BenchmarkSyncBlindedCSV is BenchmarkSyncCSV with every variable blinded
// (the same affine map streamed over both sides' columns).
func BenchmarkSyncBlindedCSV(b *testing.B) {
	n := *benchRows
	dir := benchFiles(b, n)
	blind := map[string]Affine{}
	for k := 0; k < 5; k++ {
		blind[fmt.Sprintf("v%d", k)] = Affine{S: 1.25 + float64(k), O: -3.5 * float64(k)}
	}
	b.ResetTimer()
	for b.Loop() {
		ta, err := OpenCSV(filepath.Join(dir, fmt.Sprintf("events_a_%d.csv", n)))
		if err != nil {
			b.Fatal(err)
		}
		tb, err := OpenCSV(filepath.Join(dir, fmt.Sprintf("events_b_%d.csv", n)))
		if err != nil {
			b.Fatal(err)
		}
		s, err := Sync(ta, tb, Options{Layout: Layout{Keys: []string{"run", "event"}}, Blind: blind})
		if err != nil {
			b.Fatal(err)
		}
		if !s.Vars[0].Blinded || s.Common < int64(n)*9/10 {
			b.Fatal("not blinded")
		}
	}
}
