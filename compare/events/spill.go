package events

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"math"
	"math/bits"
	"os"
	"path/filepath"
	"slices"
	"sync"
)

// The unsorted path. Both tables are read at once, each by its own
// goroutine, into hash partitions of the key: fixed-size binary records
// (keys, variables, cut bits, position; 8 bytes each) appended to chunks of
// a fixed size, so that growing a partition never copies it and the bytes
// held are exactly the chunks allocated. When a table's chunks would
// exceed its half of the memory budget, every partition is appended to its
// file in the temporary folder and the chunks are reused. Then each
// partition is loaded (file, then memory), sorted by key and merged; two
// workers load and sort the partitions ahead of the merge, so sorting runs
// on both cores while the merge consumes them in order.
//
// Sorting packs a partition's keys into one uint64 when their ranges fit
// (the usual case: run and event numbers span far fewer than 64 bits
// together), key − min per column, the first column most significant, and
// sorts with a stable least-significant-digit radix sort on the 8-bit
// digits that vary; otherwise it falls back to a stable comparison sort.
// Records reach a partition in scan order, so a stable sort keeps equal
// keys in position order and a duplicate is reported at its second
// occurrence.

// spillParts is the number of hash partitions.
const spillParts = 256

// loadMargin is how far the merge's buffers may take memory past the
// budget before the rows still held are spilled too (a variable for
// tests).
var loadMargin int64 = 32 << 20

// spill holds the rows of one table split into hash partitions.
type spill struct {
	dir    string
	prefix string
	nk, nv int
	rec    int // bytes per record
	chunk  int // bytes per chunk (a whole number of records)
	parts  []spillPart
	free   [][]byte
	held   int64 // bytes of chunks allocated
	budget int64
	f      *os.File // the spill file, made at the first flush
	w      *bufio.Writer
	off    int64
	// Spilled counts the bytes written to the temporary folder; Rows the
	// rows added.
	Spilled, Rows int64
}

type spillPart struct {
	chunks [][]byte // the last one may be partly filled
	fill   int      // bytes used in the last chunk
	onDisk int64    // bytes in the spill file
	segs   []segment
}

// segment is where one flush put a partition's records in the spill file.
type segment struct{ off, n int64 }

func newSpill(dir, prefix string, parts, nk, nv int, budget int64) *spill {
	rec := 8 * (nk + nv + 2)
	// chunks of up to 1024 records, smaller when the budget is small, so
	// that one chunk per partition stays well within the budget
	rows := int(min(1024, max(16, budget/int64(4*parts*rec))))
	return &spill{dir: dir, prefix: prefix, nk: nk, nv: nv, rec: rec, chunk: rows * rec,
		parts: make([]spillPart, parts), budget: budget}
}

// partOf hashes a key to a partition (SplitMix64's finaliser over the key
// columns; fixed, so runs are reproducible).
func partOf(key []int64, parts int) int {
	h := uint64(0x9e3779b97f4a7c15)
	for _, k := range key {
		h ^= uint64(k)
		h *= 0xbf58476d1ce4e5b9
		h ^= h >> 31
		h *= 0x94d049bb133111eb
		h ^= h >> 29
	}
	return int(h % uint64(parts))
}

// newChunk returns an empty chunk, flushing every partition to its file
// first when another chunk would exceed the budget.
func (s *spill) newChunk() ([]byte, error) {
	if len(s.free) == 0 && s.held+int64(s.chunk) > s.budget && s.held > 0 {
		if err := s.flush(); err != nil {
			return nil, err
		}
	}
	if n := len(s.free); n > 0 {
		c := s.free[n-1]
		s.free = s.free[:n-1]
		return c, nil
	}
	s.held += int64(s.chunk)
	return make([]byte, s.chunk), nil
}

func (s *spill) add(b *Batch) error {
	nk, nv := s.nk, s.nv
	for i := 0; i < b.N; i++ {
		key := b.Keys[i*nk : (i+1)*nk]
		pt := &s.parts[partOf(key, len(s.parts))]
		if len(pt.chunks) == 0 || pt.fill == s.chunk {
			c, err := s.newChunk()
			if err != nil {
				return err
			}
			pt.chunks = append(pt.chunks, c)
			pt.fill = 0
		}
		r := pt.chunks[len(pt.chunks)-1][pt.fill : pt.fill+s.rec]
		pt.fill += s.rec
		w := 0
		for _, k := range key {
			binary.LittleEndian.PutUint64(r[w:], uint64(k))
			w += 8
		}
		for _, v := range b.Vals[i*nv : (i+1)*nv] {
			binary.LittleEndian.PutUint64(r[w:], math.Float64bits(v))
			w += 8
		}
		binary.LittleEndian.PutUint64(r[w:], b.Cuts[i])
		binary.LittleEndian.PutUint64(r[w+8:], uint64(b.Pos[i]))
	}
	s.Rows += int64(b.N)
	return nil
}

// bytesIn returns the bytes of partition p held in memory.
func (s *spill) bytesIn(p int) int {
	pt := &s.parts[p]
	if len(pt.chunks) == 0 {
		return 0
	}
	return (len(pt.chunks)-1)*s.chunk + pt.fill
}

// flush appends every partition's chunks to the spill file, one segment
// per partition, and frees them.
func (s *spill) flush() error {
	if s.f == nil {
		f, err := os.OpenFile(filepath.Join(s.dir, s.prefix), os.O_CREATE|os.O_EXCL|os.O_RDWR, 0o600)
		if err != nil {
			return fmt.Errorf("spilling to a temporary file: %v", err)
		}
		s.f, s.w = f, bufio.NewWriterSize(f, 1<<18)
	}
	for p := range s.parts {
		pt := &s.parts[p]
		if len(pt.chunks) == 0 {
			continue
		}
		for i, c := range pt.chunks {
			if i == len(pt.chunks)-1 {
				c = c[:pt.fill]
			}
			if _, err := s.w.Write(c); err != nil {
				return fmt.Errorf("spilling to a temporary file: %v", err)
			}
		}
		n := int64(s.bytesIn(p))
		pt.segs = append(pt.segs, segment{s.off, n})
		s.off += n
		pt.onDisk += n
		s.Spilled += n
		s.free = append(s.free, pt.chunks...)
		pt.chunks, pt.fill = nil, 0
	}
	if err := s.w.Flush(); err != nil {
		return fmt.Errorf("spilling to a temporary file: %v", err)
	}
	return nil
}

// close closes and removes the spill file.
func (s *spill) close() {
	if s.f != nil {
		s.f.Close()
		os.Remove(s.f.Name())
		s.f = nil
	}
}

// done ends the adding: the free chunks are released.
func (s *spill) done() {
	s.free = nil
}

// loader holds one worker's reusable buffers.
type loader struct {
	recs   []byte
	packed []uint64
	idx    []uint32
	tmpP   []uint64
	tmpI   []uint32
	keys   []int64
}

// load returns partition p as a batch sorted by key (equal keys in
// position order), written into b's storage.
func (s *spill) load(p int, ld *loader, b *Batch) error {
	pt := &s.parts[p]
	size := int(pt.onDisk) + s.bytesIn(p)
	ld.recs = slices.Grow(ld.recs[:0], size)[:0]
	for _, sg := range pt.segs {
		at := len(ld.recs)
		ld.recs = ld.recs[:at+int(sg.n)]
		if _, err := s.f.ReadAt(ld.recs[at:], sg.off); err != nil {
			return fmt.Errorf("reading back a temporary file: %v", err)
		}
	}
	for i, c := range pt.chunks {
		if i == len(pt.chunks)-1 {
			c = c[:pt.fill]
		}
		ld.recs = append(ld.recs, c...)
	}
	pt.chunks, pt.fill, pt.onDisk, pt.segs = nil, 0, 0, nil
	data := ld.recs
	nk, nv, rec := s.nk, s.nv, s.rec
	n := len(data) / rec
	ld.keys = slices.Grow(ld.keys[:0], n*nk)[:n*nk]
	keys := ld.keys
	for r := 0; r < n; r++ {
		for w := 0; w < nk; w++ {
			keys[r*nk+w] = int64(binary.LittleEndian.Uint64(data[r*rec+8*w:]))
		}
	}
	order := ld.sortKeys(keys, nk, n)
	b.reset()
	b.N = n
	b.Keys = slices.Grow(b.Keys, n*nk)[:n*nk]
	b.Vals = slices.Grow(b.Vals, n*nv)[:n*nv]
	b.Cuts = slices.Grow(b.Cuts, n)[:n]
	b.Pos = slices.Grow(b.Pos, n)[:n]
	for i, r32 := range order {
		r := int(r32)
		copy(b.Keys[i*nk:(i+1)*nk], keys[r*nk:(r+1)*nk])
		rd := data[r*rec+8*nk : (r+1)*rec]
		for w := 0; w < nv; w++ {
			b.Vals[i*nv+w] = math.Float64frombits(binary.LittleEndian.Uint64(rd[8*w:]))
		}
		b.Cuts[i] = binary.LittleEndian.Uint64(rd[8*nv:])
		b.Pos[i] = int64(binary.LittleEndian.Uint64(rd[8*nv+8:]))
	}
	return nil
}

// sortKeys returns the row order that sorts n keys of nk columns
// stably.
func (ld *loader) sortKeys(keys []int64, nk, n int) []uint32 {
	ld.idx = slices.Grow(ld.idx[:0], n)[:n]
	idx := ld.idx
	for i := range idx {
		idx[i] = uint32(i)
	}
	if n < 2 {
		return idx
	}
	var lo [MaxKeys]int64
	var width [MaxKeys]int
	total := 0
	for w := 0; w < nk; w++ {
		mn, mx := keys[w], keys[w]
		for r := 1; r < n; r++ {
			v := keys[r*nk+w]
			mn, mx = min(mn, v), max(mx, v)
		}
		lo[w], width[w] = mn, bits.Len64(uint64(mx)-uint64(mn))
		total += width[w]
	}
	if total > 64 {
		slices.SortStableFunc(idx, func(x, y uint32) int {
			return compareKeys(keys[int(x)*nk:int(x+1)*nk], keys[int(y)*nk:int(y+1)*nk])
		})
		return idx
	}
	ld.packed = slices.Grow(ld.packed[:0], n)[:n]
	packed := ld.packed
	for r := 0; r < n; r++ {
		var v uint64
		for w := 0; w < nk; w++ {
			v = v<<width[w] | (uint64(keys[r*nk+w]) - uint64(lo[w]))
		}
		packed[r] = v
	}
	ld.tmpP = slices.Grow(ld.tmpP[:0], n)[:n]
	ld.tmpI = slices.Grow(ld.tmpI[:0], n)[:n]
	src, srcI, dst, dstI := packed, idx, ld.tmpP, ld.tmpI
	for shift := 0; shift < total; shift += 8 {
		var count [256]int
		for _, v := range src {
			count[byte(v>>shift)]++
		}
		if count[byte(src[0]>>shift)] == n {
			continue // every key has this digit
		}
		sum := 0
		for d, c := range count {
			count[d] = sum
			sum += c
		}
		for i, v := range src {
			d := byte(v >> shift)
			j := count[d]
			count[d]++
			dst[j], dstI[j] = v, srcI[i]
		}
		src, srcI, dst, dstI = dst, dstI, src, srcI
	}
	return srcI
}

// partitioned is the path for tables not sorted by key: both are read
// into hash partitions at once, then each partition is sorted and merged.
// It returns the bytes spilled to the temporary folder.
func partitioned(a, b Source, acc *acc, dir string) (int64, error) {
	l := acc.o.Layout
	// Each table's rows get 7/16 of the budget: an eighth is left for the
	// sort buffers, the batches and the readers.
	held := acc.o.MemBudget / 16 * 7
	spills := [2]*spill{
		newSpill(dir, "a", spillParts, acc.nk, acc.nv, held),
		newSpill(dir, "b", spillParts, acc.nk, acc.nv, held),
	}
	defer spills[0].close()
	defer spills[1].close()
	errs := make(chan error, 2)
	for i, t := range []Source{a, b} {
		go func() {
			errs <- t.Scan(l, func(bt *Batch) error {
				if err := spills[i].add(bt); err != nil {
					return err
				}
				acc.progress(i, bt.N)
				return nil
			})
		}()
	}
	var first error
	for range 2 {
		if err := <-errs; err != nil && first == nil {
			first = err
		}
	}
	if first != nil {
		return 0, first
	}
	// The merge holds up to about ten partitions' worth of records at once
	// (the batch pool and the two loaders' buffers). When that, on top of
	// the chunks still in memory, would pass the budget by more than
	// loadMargin (very large spilled inputs, whose partitions are large),
	// the chunks go to the spill file first, so that the merge has the
	// whole budget.
	var most int64
	for p := range spillParts {
		for _, sp := range spills {
			most = max(most, sp.parts[p].onDisk+int64(sp.bytesIn(p)))
		}
	}
	if spills[0].Spilled+spills[1].Spilled > 0 && spills[0].held+spills[1].held+10*most > acc.o.MemBudget+loadMargin {
		for _, sp := range spills {
			if err := sp.flush(); err != nil {
				return 0, err
			}
		}
	}
	spills[0].done()
	spills[1].done()
	spilled := spills[0].Spilled + spills[1].Spilled

	// Two workers load and sort partitions (A's and B's of the same
	// partition as two jobs). The dispatcher hands out the jobs in
	// partition order, each with a batch from a fixed pool, so the workers
	// run at most two partitions ahead of the merge and the pool cannot
	// be taken by later partitions while an earlier one waits.
	const ahead = 2
	type job struct {
		p, side int
		b       *Batch
		err     error
		ready   chan struct{}
	}
	jobs := make([][2]*job, spillParts)
	for p := range jobs {
		for side := range 2 {
			jobs[p][side] = &job{p: p, side: side, ready: make(chan struct{})}
		}
	}
	free := make(chan *Batch, 2*(ahead+1))
	for range 2 * (ahead + 1) {
		free <- &Batch{}
	}
	stop := make(chan struct{})
	next := make(chan *job)
	var wg sync.WaitGroup
	wg.Add(3)
	go func() {
		defer wg.Done()
		defer close(next)
		for p := range jobs {
			for side := range 2 {
				j := jobs[p][side]
				select {
				case j.b = <-free:
				case <-stop:
					return
				}
				select {
				case next <- j:
				case <-stop:
					return
				}
			}
		}
	}()
	for range 2 {
		go func() {
			defer wg.Done()
			ld := &loader{}
			for j := range next {
				j.err = spills[j.side].load(j.p, ld, j.b)
				close(j.ready)
			}
		}()
	}
	defer func() {
		close(stop)
		wg.Wait()
	}()
	for p := range jobs {
		var parts [2]*Batch
		for side := range 2 {
			j := jobs[p][side]
			<-j.ready
			if j.err != nil {
				return 0, j.err
			}
			parts[side] = j.b
		}
		ca := &cursor{t: a, names: l.Keys, side: 0, nk: acc.nk, nv: acc.nv, next: once(parts[0])}
		cb := &cursor{t: b, names: l.Keys, side: 1, nk: acc.nk, nv: acc.nv, next: once(parts[1])}
		if err := mergeJoin(acc, ca, cb); err != nil {
			return 0, err
		}
		free <- parts[0]
		free <- parts[1]
		acc.partDone(p+1, spillParts)
	}
	return spilled, nil
}

// once hands out one batch, then the end.
func once(b *Batch) func() (*Batch, error) {
	return func() (*Batch, error) {
		x := b
		b = nil
		return x, nil
	}
}
