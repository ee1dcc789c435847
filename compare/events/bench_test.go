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
		rg, err := w.AppendRowGroupChecked()
		if err != nil {
			b.Fatal(err)
		}
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
		ta, err := OpenSource(filepath.Join(dir, fmt.Sprintf("events_a_%d.%s", n, ext)), TreeFuncs{})
		if err != nil {
			b.Fatal(err)
		}
		tb, err := OpenSource(filepath.Join(dir, fmt.Sprintf("events_b_%d.%s", n, ext)), TreeFuncs{})
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

// syncBenchFiles writes the tables of the sync workload the README times:
// n events in A, 95 % of them in B plus as many of B's own, two float
// variables (x with six decimals, y with nine significant digits) and two
// 0/1 cuts, each table once sorted by (run, event) and once in an order of
// its own (a fixed permutation per chain, as chains write events in
// processing order). Files: sync_{a,b}_{sorted,shuffled}_N.csv.
func syncBenchFiles(tb testing.TB, n int) string {
	dir := *benchDir
	if dir == "" {
		dir = tb.TempDir()
	}
	last := filepath.Join(dir, fmt.Sprintf("sync_b_shuffled_%d.csv", n))
	if _, err := os.Stat(last); err == nil {
		return dir
	}
	rng := rand.New(rand.NewPCG(7, 11))
	var rows [2][][]byte
	line := func(run, ev int64, x, y float64, c1, c2 int) []byte {
		b := strconv.AppendInt(nil, run, 10)
		b = append(b, ',')
		b = strconv.AppendInt(b, ev, 10)
		b = append(b, ',')
		b = strconv.AppendFloat(b, x, 'f', 6, 64)
		b = append(b, ',')
		b = strconv.AppendFloat(b, y, 'g', 9, 64)
		b = append(b, ',', byte('0'+c1), ',', byte('0'+c2), '\n')
		return b
	}
	for i := 0; i < n; i++ {
		run, ev := int64(1+i/100000), int64(2*i)
		x := float64(rng.IntN(2_000_000_000)) / 1e6
		y := rng.ExpFloat64() * 40
		c1, c2 := rng.IntN(10) < 9, rng.IntN(10) < 7
		rows[0] = append(rows[0], line(run, ev, x, y, bit(c1), bit(c1 && c2)))
		if rng.IntN(20) != 0 {
			if rng.IntN(100) == 0 {
				y *= 1 + 1e-7
			}
			if rng.IntN(1000) == 0 {
				c2 = !c2
			}
			rows[1] = append(rows[1], line(run, ev, x, y, bit(c1), bit(c1 && c2)))
		} else {
			rows[1] = append(rows[1], line(run, ev+1, float64(rng.IntN(2_000_000_000))/1e6, rng.ExpFloat64()*40, 1, 1))
		}
	}
	write := func(name string, rs [][]byte) {
		f, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			tb.Fatal(err)
		}
		w := bufio.NewWriterSize(f, 1<<20)
		w.WriteString("run,event,x,y,c1,c2\n")
		for _, r := range rs {
			w.Write(r)
		}
		if err := w.Flush(); err != nil {
			tb.Fatal(err)
		}
		if err := f.Close(); err != nil {
			tb.Fatal(err)
		}
	}
	for side, s := range []string{"a", "b"} {
		write(fmt.Sprintf("sync_%s_sorted_%d.csv", s, n), rows[side])
		p := rand.New(rand.NewPCG(uint64(13+side), 17))
		p.Shuffle(len(rows[side]), func(i, j int) { rows[side][i], rows[side][j] = rows[side][j], rows[side][i] })
	}
	// write B's shuffled table last: its presence means the set is complete
	write(fmt.Sprintf("sync_a_shuffled_%d.csv", n), rows[0])
	write(fmt.Sprintf("sync_b_shuffled_%d.csv", n), rows[1])
	return dir
}

func benchSyncOrder(b *testing.B, order string) {
	n := *benchRows
	dir := syncBenchFiles(b, n)
	b.ResetTimer()
	for b.Loop() {
		ta, err := OpenCSV(filepath.Join(dir, fmt.Sprintf("sync_a_%s_%d.csv", order, n)))
		if err != nil {
			b.Fatal(err)
		}
		tb, err := OpenCSV(filepath.Join(dir, fmt.Sprintf("sync_b_%s_%d.csv", order, n)))
		if err != nil {
			b.Fatal(err)
		}
		s, err := Sync(ta, tb, Options{Layout: Layout{Keys: []string{"run", "event"}, Cuts: []string{"c1", "c2"}}})
		if err != nil {
			b.Fatal(err)
		}
		if s.Common < int64(n)*9/10 || s.Spilled != (order == "shuffled") {
			b.Fatalf("common %d, spilled %v", s.Common, s.Spilled)
		}
	}
}

// go test ./compare/events -run XXX -bench SyncOrder -benchmem -benchdir /tmp/evbench -benchrows 2000000
func BenchmarkSyncOrderSorted(b *testing.B)   { benchSyncOrder(b, "sorted") }
func BenchmarkSyncOrderShuffled(b *testing.B) { benchSyncOrder(b, "shuffled") }
