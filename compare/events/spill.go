package events

import (
	"cmp"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
)

// spill holds the rows of one table split into hash partitions of fixed-size
// binary records (keys, variables, cut bits, position), in memory up to a
// budget and in one file per partition beyond it.
type spill struct {
	dir    string
	prefix string
	nk, nv int
	rec    int
	bufs   [][]byte
	held   int64
	budget int64
	rows   []int64
}

func newSpill(dir, prefix string, parts, nk, nv int, budget int64) *spill {
	return &spill{dir: dir, prefix: prefix, nk: nk, nv: nv, rec: 8 * (nk + nv + 2),
		bufs: make([][]byte, parts), budget: budget, rows: make([]int64, parts)}
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

func (s *spill) file(p int) string {
	return filepath.Join(s.dir, s.prefix+strconv.Itoa(p))
}

func (s *spill) add(b *Batch) error {
	for i := 0; i < b.N; i++ {
		key := b.Keys[i*s.nk : (i+1)*s.nk]
		p := partOf(key, len(s.bufs))
		buf := s.bufs[p]
		for _, k := range key {
			buf = binary.LittleEndian.AppendUint64(buf, uint64(k))
		}
		for _, v := range b.Vals[i*s.nv : (i+1)*s.nv] {
			buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(v))
		}
		buf = binary.LittleEndian.AppendUint64(buf, b.Cuts[i])
		buf = binary.LittleEndian.AppendUint64(buf, uint64(b.Pos[i]))
		s.bufs[p] = buf
		s.rows[p]++
	}
	s.held += int64(b.N * s.rec)
	if s.held > s.budget {
		return s.flush()
	}
	return nil
}

// flush appends every partition's buffer to its file.
func (s *spill) flush() error {
	for p, buf := range s.bufs {
		if len(buf) == 0 {
			continue
		}
		f, err := os.OpenFile(s.file(p), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o600)
		if err != nil {
			return fmt.Errorf("spilling to a temporary file: %v", err)
		}
		_, err = f.Write(buf)
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			return fmt.Errorf("spilling to a temporary file: %v", err)
		}
		s.bufs[p] = buf[:0]
	}
	s.held = 0
	return nil
}

// load returns partition p as one batch sorted by key, then position.
func (s *spill) load(p int) (*Batch, error) {
	data, err := os.ReadFile(s.file(p))
	if err != nil && !os.IsNotExist(err) {
		return nil, fmt.Errorf("reading back a temporary file: %v", err)
	}
	os.Remove(s.file(p))
	data = append(data, s.bufs[p]...)
	s.bufs[p] = nil
	n := len(data) / s.rec
	idx := make([]int32, n)
	for i := range idx {
		idx[i] = int32(i)
	}
	word := func(r, w int) uint64 { return binary.LittleEndian.Uint64(data[r*s.rec+8*w:]) }
	keyOf := func(r int) []int64 {
		k := make([]int64, s.nk)
		for w := range k {
			k[w] = int64(word(r, w))
		}
		return k
	}
	keys := make([]int64, 0, n*s.nk)
	for r := 0; r < n; r++ {
		keys = append(keys, keyOf(r)...)
	}
	posW := s.nk + s.nv + 1
	slices.SortFunc(idx, func(x, y int32) int {
		if c := compareKeys(keys[int(x)*s.nk:int(x+1)*s.nk], keys[int(y)*s.nk:int(y+1)*s.nk]); c != 0 {
			return c
		}
		return cmp.Compare(int64(word(int(x), posW)), int64(word(int(y), posW)))
	})
	b := &Batch{N: n, Keys: make([]int64, 0, n*s.nk), Vals: make([]float64, 0, n*s.nv),
		Cuts: make([]uint64, 0, n), Pos: make([]int64, 0, n)}
	for _, r := range idx {
		b.Keys = append(b.Keys, keys[int(r)*s.nk:int(r+1)*s.nk]...)
		for w := 0; w < s.nv; w++ {
			b.Vals = append(b.Vals, math.Float64frombits(word(int(r), s.nk+w)))
		}
		b.Cuts = append(b.Cuts, word(int(r), s.nk+s.nv))
		b.Pos = append(b.Pos, int64(word(int(r), posW)))
	}
	return b, nil
}

// partitioned is the path for tables not sorted by key: both are read
// into hash partitions at once, then each partition is sorted and merged.
func partitioned(a, b Table, acc *acc, dir string) error {
	l := acc.o.Layout
	spills := [2]*spill{
		newSpill(dir, "a", defaultParts, acc.nk, acc.nv, acc.o.MemBudget/2),
		newSpill(dir, "b", defaultParts, acc.nk, acc.nv, acc.o.MemBudget/2),
	}
	errs := make(chan error, 2)
	for i, t := range []Table{a, b} {
		go func() {
			errs <- t.Scan(l, spills[i].add)
		}()
	}
	var first error
	for range 2 {
		if err := <-errs; err != nil && first == nil {
			first = err
		}
	}
	if first != nil {
		return first
	}
	for p := 0; p < defaultParts; p++ {
		var parts [2]*Batch
		for i, sp := range spills {
			bt, err := sp.load(p)
			if err != nil {
				return err
			}
			parts[i] = bt
		}
		ca := &cursor{t: a, names: l.Keys, side: 0, nk: acc.nk, nv: acc.nv, next: once(parts[0])}
		cb := &cursor{t: b, names: l.Keys, side: 1, nk: acc.nk, nv: acc.nv, next: once(parts[1])}
		if err := mergeJoin(acc, ca, cb); err != nil {
			return err
		}
	}
	return nil
}

// once hands out one batch, then the end.
func once(b *Batch) func() (*Batch, error) {
	return func() (*Batch, error) {
		x := b
		b = nil
		return x, nil
	}
}
