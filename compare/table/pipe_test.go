package table

import (
	"bytes"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// readerOnly hides every method but Read, as a pipe does: the reader
// cannot learn the input size.
type readerOnly struct{ r io.Reader }

func (r readerOnly) Read(p []byte) (int, error) { return r.r.Read(p) }

// rowsReader is an endless table: a header, then rows of adjacent bins.
type rowsReader struct {
	line []byte // the current line
	off  int    // bytes of line already read
	i    int
}

func newRowsReader() *rowsReader {
	return &rowsReader{line: append(make([]byte, 0, 64), "lo,hi,rate,stat\n"...)}
}

func (r *rowsReader) Read(p []byte) (int, error) {
	n := 0
	for n < len(p) {
		if r.off == len(r.line) {
			r.line = strconv.AppendInt(r.line[:0], int64(r.i), 10)
			r.line = append(r.line, ',')
			r.line = strconv.AppendInt(r.line, int64(r.i+1), 10)
			r.line = append(r.line, ",12.5,0.25\n"...)
			r.off = 0
			r.i++
		}
		k := copy(p[n:], r.line[r.off:])
		r.off += k
		n += k
	}
	return n, nil
}

// allocated returns the bytes f allocates (runtime.MemStats.TotalAlloc).
func allocated(f func()) uint64 {
	var a, b runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&a)
	f()
	runtime.ReadMemStats(&b)
	return b.TotalAlloc - a.TotalAlloc
}

// TestEndlessPipeBounded: an endless stream is refused by the limit, with
// a message naming it and the flag that raises it, and reading it
// allocates the limit's worth of numbers plus the blocks in flight, for
// small and default blocks alike. Columns regrown at every block (as
// before) allocated the square of the blocks: about 0.3 GB for 32 MiB of
// 1-MiB blocks, 60 GB for 4-KiB ones.
func TestEndlessPipeBounded(t *testing.T) {
	const limit = 32 << 20
	pool := uint64(runtime.GOMAXPROCS(0) + 2)
	for _, target := range []int{4 << 10, blockBytes} {
		var err error
		got := allocated(func() {
			_, err = parse(StdinName, newRowsReader(), 0, CSVOptions{Limits: Limits{MaxBytes: limit}}, target)
		})
		e := wantErr(t, err, "standard input")
		if !strings.Contains(e.Error(), "limit of 33554432 bytes") || !strings.Contains(e.Hint, flagMaxBytes) {
			t.Errorf("target %d: message %q, hint %q: want the limit and the flag", target, e.Error(), e.Hint)
		}
		// The numbers held are at most the limit (slabs add an
		// eighth; twice that leaves a margin); each block in flight
		// holds its text (target plus 64 KiB of room) and its numbers,
		// at most 4 bytes of float64 per byte of text, allocated twice
		// over while they grow.
		bound := 2*limit + pool*uint64(target+(64<<10))*10
		t.Logf("target %d: allocated %d bytes, bound %d", target, got, bound)
		if got > bound {
			t.Errorf("target %d: reading the endless stream allocated %d bytes, want at most %d", target, got, bound)
		}
	}
}

// TestPipeCostsAsFile: the same bytes read from a pipe (size unknown) and
// with their size known give the same table, and the pipe allocates at
// most one more copy of the table's numbers (the slabs joined at the end).
func TestPipeCostsAsFile(t *testing.T) {
	var text bytes.Buffer
	if _, err := io.CopyN(&text, newRowsReader(), 6<<20); err != nil {
		t.Fatal(err)
	}
	data := text.Bytes()
	data = data[:bytes.LastIndexByte(data, '\n')+1]
	var fromFile, fromPipe *Table
	var errF, errP error
	file := allocated(func() { fromFile, errF = ParseCSV("t.csv", data, CSVOptions{}) })
	pipe := allocated(func() { fromPipe, errP = ReadCSV("t.csv", readerOnly{bytes.NewReader(data)}, CSVOptions{}) })
	if errF != nil || errP != nil {
		t.Fatal(errF, errP)
	}
	same := fromFile.Len() == fromPipe.Len() && slices.Equal(fromFile.Lo, fromPipe.Lo) && slices.Equal(fromFile.Hi, fromPipe.Hi) && fromFile.FirstLine == fromPipe.FirstLine
	for k := range fromFile.Cols {
		same = same && slices.Equal(fromFile.Cols[k], fromPipe.Cols[k])
	}
	if !same {
		t.Fatal("the pipe gave another table than the file")
	}
	// A standard input redirected from a file is read as a file.
	p := filepath.Join(t.TempDir(), "t.csv")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(p)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var fromRedirect *Table
	redirect := allocated(func() { fromRedirect, errP = ReadCSV(StdinName, f, CSVOptions{}) })
	if errP != nil || fromRedirect.Len() != fromFile.Len() {
		t.Fatalf("redirected: %v", errP)
	}
	if float64(redirect) > 1.1*float64(file) {
		t.Errorf("a redirected standard input allocated %d bytes, the file %d", redirect, file)
	}
	numbers := uint64(8 * fromFile.Len() * (2 + len(fromFile.Names)))
	t.Logf("%d bytes, %d bytes of numbers: file allocated %d, pipe %d", len(data), numbers, file, pipe)
	if pipe > file+numbers*9/8 {
		t.Errorf("pipe allocated %d bytes, file %d: want at most one more copy of the %d bytes of numbers", pipe, file, numbers)
	}
}

// peakHeap samples the bytes of live heap objects every millisecond while
// f runs and returns the largest sample above the level before.
func peakHeap(f func()) uint64 {
	runtime.GC()
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	metrics.Read(sample)
	base := sample[0].Value.Uint64()
	var peak uint64
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
		tick := time.NewTicker(time.Millisecond)
		defer tick.Stop()
		for {
			metrics.Read(s)
			if v := s[0].Value.Uint64(); v > base && v-base > peak {
				peak = v - base
			}
			select {
			case <-done:
				return
			case <-tick.C:
			}
		}
	}()
	f()
	close(done)
	wg.Wait()
	return peak
}

// BenchmarkReadPipe reads the same 10⁶-bin table (shortest round-trip
// numbers, 5 columns) from its file and through a reader that hides the
// size, as a pipe does, and reports the bytes allocated and the peak of
// live heap per input byte:
//
//	go test ./compare/table -run XXX -bench ReadPipe -benchtime 3x
func BenchmarkReadPipe(b *testing.B) {
	pa, _ := styleTables(b, numberStyles[2], 1_000_000)
	fi, err := os.Stat(pa)
	if err != nil {
		b.Fatal(err)
	}
	for _, how := range []string{"file", "pipe"} {
		b.Run(how, func(b *testing.B) {
			b.SetBytes(fi.Size())
			var alloc, peak uint64
			for b.Loop() {
				var err error
				alloc += allocated(func() {
					peak = max(peak, peakHeap(func() {
						if how == "file" {
							_, err = ReadFile(pa, CSVOptions{})
							return
						}
						var f *os.File
						if f, err = os.Open(pa); err != nil {
							return
						}
						defer f.Close()
						_, err = ReadCSV(StdinName, readerOnly{f}, CSVOptions{})
					}))
				})
				if err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(alloc)/float64(b.N)/float64(fi.Size()), "alloc-B/in-B")
			b.ReportMetric(float64(peak)/float64(fi.Size()), "peak-B/in-B")
		})
	}
}
