package events

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"math/bits"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"sync"
)

// Affine is a blinding map v' = S·v + O applied to both sides of one
// variable.
type Affine struct{ S, O float64 }

// Options controls [Sync].
type Options struct {
	// Keys, Vars and Cuts name the columns (see [ResolveLayout]).
	Layout Layout
	// Tols holds per-variable tolerances; others get DefaultTolerance.
	Tols map[string]Tolerance
	// Alpha is the family-wise false-alarm rate of the cut-flow tests
	// (default 0.01); CL the confidence level of the Clopper–Pearson
	// intervals (default 0.6827, one standard deviation).
	Alpha, CL float64
	// Binning, when set, asks for the per-bin overlap counts.
	Binning *Binning
	// Blind maps variables to the affine blinding map both sides get.
	// Tolerances are judged on the true values, so which events agree does
	// not depend on the map; every value and difference the summary keeps
	// is a blinded one.
	Blind map[string]Affine
	// Worst and Sample bound the lists of failing events and of unmatched
	// keys kept in the summary (defaults DefaultWorst, DefaultSample).
	Worst, Sample int
	// Unmatched, when set, receives the full list of unmatched keys as CSV
	// (side, key columns, position), in key order.
	Unmatched io.Writer
	// TempDir is where unsorted inputs are spilled (default os.TempDir);
	// MemBudget the bytes of rows held in memory before spilling
	// (default 256 MiB).
	TempDir   string
	MemBudget int64
	// LabelA and LabelB name the chains in reports.
	LabelA, LabelB string
	// Progress, when set, is called now and then while the tables are
	// read (about every million rows) and merged; calls never overlap.
	Progress func(Progress)

	// Compared is the number of leading Layout.Vars that are compared
	// (the binning variable may follow); set by Sync.
	Compared int
	// Tol is the tolerance of each compared variable; set by Sync.
	Tol []Tolerance
}

// Defaults of Options.
const (
	DefaultAlpha     = 0.01
	DefaultCL        = 0.6827
	defaultBudget    = 256 << 20
	defaultParts     = 64
	unmatchedColumns = "side"
)

// prepare fills defaults and checks o against the tables' columns.
func (o *Options) prepare(ca, cb []ColumnInfo, nameA, nameB string) error {
	if o.Alpha == 0 {
		o.Alpha = DefaultAlpha
	}
	if o.CL == 0 {
		o.CL = DefaultCL
	}
	if !(o.Alpha > 0 && o.Alpha < 1) || !(o.CL > 0 && o.CL < 1) {
		return fmt.Errorf("alpha and the confidence level must lie in (0, 1)")
	}
	if o.Worst == 0 {
		o.Worst = DefaultWorst
	}
	if o.Sample == 0 {
		o.Sample = DefaultSample
	}
	if o.MemBudget <= 0 {
		o.MemBudget = defaultBudget
	}
	if o.LabelA == "" {
		o.LabelA = filepath.Base(nameA)
	}
	if o.LabelB == "" {
		o.LabelB = filepath.Base(nameB)
	}
	if o.LabelA == o.LabelB {
		o.LabelA, o.LabelB = "A: "+o.LabelA, "B: "+o.LabelB
	}
	l, err := ResolveLayout(ca, cb, nameA, nameB, o.Layout.Keys, o.Layout.Vars, o.Layout.Cuts)
	if err != nil {
		return err
	}
	o.Layout = l
	o.Compared = len(l.Vars)
	o.Tol = make([]Tolerance, o.Compared)
	for j, v := range l.Vars {
		o.Tol[j] = DefaultTolerance
		if t, ok := o.Tols[v]; ok {
			o.Tol[j] = t
		}
	}
	for name, t := range o.Tols {
		if !slices.Contains(l.Vars, name) {
			return fmt.Errorf("tolerance given for %q, which is not a compared variable", name)
		}
		if !(t.Abs >= 0 && t.Rel >= 0) || math.IsInf(t.Abs, 0) || math.IsInf(t.Rel, 0) {
			return fmt.Errorf("tolerance of %q must be finite and >= 0", name)
		}
	}
	for name, m := range o.Blind {
		if !slices.Contains(l.Vars, name) && (o.Binning == nil || o.Binning.Var != name) {
			return fmt.Errorf("blinding map given for %q, which is not a compared variable", name)
		}
		if m.S == 0 || math.IsNaN(m.S) || math.IsInf(m.S, 0) || math.IsNaN(m.O) || math.IsInf(m.O, 0) {
			return fmt.Errorf("blinding map of %q is degenerate", name)
		}
	}
	if bn := o.Binning; bn != nil {
		if len(bn.Edges) < 2 {
			return fmt.Errorf("binning needs at least two edges")
		}
		for i := 1; i < len(bn.Edges); i++ {
			if !(bn.Edges[i] > bn.Edges[i-1]) || math.IsInf(bn.Edges[i], 0) || math.IsInf(bn.Edges[0], 0) {
				return fmt.Errorf("bin edges must be finite and increasing (edge %d: %v after %v)", i+1, bn.Edges[i], bn.Edges[i-1])
			}
		}
		if !slices.Contains(l.Vars, bn.Var) {
			bl, err := ResolveLayout(ca, cb, nameA, nameB, l.Keys, []string{bn.Var}, nil)
			if err != nil {
				return err
			}
			o.Layout.Vars = append(slices.Clip(l.Vars), bl.Vars...)
		}
	}
	return nil
}

// Sync matches the events of a and b by key and compares them. Inputs
// sorted by key are merged in one pass with bounded memory; otherwise the
// rows are hash-partitioned (spilled to a temporary folder beyond
// MemBudget) and each partition is sorted and merged. Duplicate keys in a
// table are an error naming both positions.
func Sync(a, b Source, o Options) (*Summary, error) {
	ca, err := a.Columns()
	if err != nil {
		return nil, err
	}
	cb, err := b.Columns()
	if err != nil {
		return nil, err
	}
	if err := o.prepare(ca, cb, a.Name(), b.Name()); err != nil {
		return nil, err
	}
	tmp, err := os.MkdirTemp(o.TempDir, "tandem-sync-")
	if err != nil {
		return nil, fmt.Errorf("temporary folder: %v", err)
	}
	defer os.RemoveAll(tmp)

	var list *os.File
	if o.Unmatched != nil {
		if list, err = os.Create(filepath.Join(tmp, "unmatched.csv")); err != nil {
			return nil, fmt.Errorf("temporary file: %v", err)
		}
		defer list.Close()
	}
	start := func(spilled bool) (*acc, error) {
		acc := newAcc(&o)
		acc.s.Spilled = spilled
		acc.prog.Unsorted = spilled
		acc.pnext = progressRows
		if list != nil {
			if err := list.Truncate(0); err != nil {
				return nil, fmt.Errorf("temporary file: %v", err)
			}
			if _, err := list.Seek(0, io.SeekStart); err != nil {
				return nil, fmt.Errorf("temporary file: %v", err)
			}
			acc.list = bufio.NewWriterSize(list, 1<<16)
			acc.writeListHeader()
		}
		return acc, nil
	}
	acc, err := start(false)
	if err != nil {
		return nil, err
	}
	err = sortedMerge(a, b, acc)
	if errors.Is(err, errUnsorted) {
		if acc, err = start(true); err != nil {
			return nil, err
		}
		acc.s.SpilledBytes, err = partitioned(a, b, acc, tmp)
	}
	if err != nil {
		return nil, err
	}
	if o.Unmatched != nil {
		if err := acc.finishList(list); err != nil {
			return nil, err
		}
	}
	return acc.s, nil
}

// Progress tells how far a long synchronisation has come.
type Progress struct {
	// Rows counts the rows read so far from each table (on the unsorted
	// path, the second reading).
	Rows [2]int64
	// Unsorted is set once the tables were found not sorted by key;
	// PartsDone of Parts partitions have then been merged.
	Unsorted         bool
	PartsDone, Parts int
}

// progressRows is about how many rows pass between two progress calls (a
// variable for tests).
var progressRows int64 = 1 << 20

// progress counts n more rows read from a side and calls the callback
// when another progressRows rows have passed.
func (a *acc) progress(side, n int) {
	if a.o.Progress == nil {
		return
	}
	a.pmu.Lock()
	defer a.pmu.Unlock()
	a.prog.Rows[side] += int64(n)
	if t := a.prog.Rows[0] + a.prog.Rows[1]; t >= a.pnext {
		a.pnext = t + progressRows
		a.o.Progress(a.prog)
	}
}

// partDone reports a merged partition.
func (a *acc) partDone(done, parts int) {
	if a.o.Progress == nil || done%16 != 0 {
		return
	}
	a.pmu.Lock()
	defer a.pmu.Unlock()
	a.prog.PartsDone, a.prog.Parts = done, parts
	a.o.Progress(a.prog)
}

// acc accumulates a summary row by row.
type acc struct {
	pmu   sync.Mutex
	prog  Progress
	pnext int64

	o        *Options
	s        *Summary
	nk, nv   int
	ncmp     int
	nc       int
	affine   []Affine
	blinded  []bool
	binVar   int
	list     *bufio.Writer
	deferred []unmatched // unsorted path: unmatched keys, sorted at the end
	ev       Event
	line     []byte
}

type unmatched struct {
	key  [MaxKeys]int64
	side uint8
	pos  int64
}

func newAcc(o *Options) *acc {
	a := &acc{o: o, s: newSummary(o), nk: len(o.Layout.Keys), nv: len(o.Layout.Vars),
		ncmp: o.Compared, nc: len(o.Layout.Cuts), binVar: -1}
	a.affine = make([]Affine, a.nv)
	a.blinded = make([]bool, a.nv)
	for j, v := range o.Layout.Vars {
		a.affine[j] = Affine{S: 1}
		if m, ok := o.Blind[v]; ok {
			a.affine[j], a.blinded[j] = m, true
		}
		if o.Binning != nil && v == o.Binning.Var && a.binVar < 0 {
			a.binVar = j
		}
	}
	a.ev.A, a.ev.B = make([]Value, a.ncmp), make([]Value, a.ncmp)
	return a
}

// passed returns how many leading cuts the bits pass.
func (a *acc) passed(c uint64) int {
	return min(bits.TrailingZeros64(^c), a.nc)
}

// bin returns the bin of the binning value of vals, or -1.
func (a *acc) bin(vals []float64) int {
	e := a.o.Binning.Edges
	v := vals[a.binVar]
	if !(v >= e[0] && v < e[len(e)-1]) {
		return -1
	}
	i := sort.SearchFloat64s(e, v) // first edge >= v
	if e[i] != v {
		i--
	}
	return i
}

func (a *acc) single(side int, key []int64, vals []float64, cuts uint64, pos int64) error {
	s := a.s
	s.seeKey(key)
	p := a.passed(cuts)
	if side == 0 {
		s.RowsA++
		s.OnlyA++
		s.PassA[p]++
		s.SampleA = offerKey(s.SampleA, key, a.o.Sample)
	} else {
		s.RowsB++
		s.OnlyB++
		s.PassB[p]++
		s.SampleB = offerKey(s.SampleB, key, a.o.Sample)
	}
	if a.binVar >= 0 && p == a.nc {
		if i := a.bin(vals); i >= 0 {
			if side == 0 {
				s.Bins[i].NA++
			} else {
				s.Bins[i].NB++
			}
		} else {
			s.OutsideBins[side]++
		}
	}
	if a.o.Unmatched != nil {
		if a.s.Spilled {
			u := unmatched{side: uint8(side), pos: pos}
			copy(u.key[:], key)
			a.deferred = append(a.deferred, u)
			return nil
		}
		return a.writeUnmatched(side, key, pos)
	}
	return nil
}

func (a *acc) common(key []int64, va []float64, ca uint64, pa int64, vb []float64, cb uint64, pb int64) {
	s := a.s
	s.seeKey(key)
	s.RowsA++
	s.RowsB++
	s.Common++
	sa, sb := a.passed(ca), a.passed(cb)
	s.PassA[sa]++
	s.PassB[sb]++
	s.Pairs[sa*(a.nc+1)+sb]++
	if a.binVar >= 0 {
		ia, ib := -1, -1
		if sa == a.nc {
			if ia = a.bin(va); ia >= 0 {
				s.Bins[ia].NA++
			} else {
				s.OutsideBins[0]++
			}
		}
		if sb == a.nc {
			if ib = a.bin(vb); ib >= 0 {
				s.Bins[ib].NB++
			} else {
				s.OutsideBins[1]++
			}
		}
		if ia >= 0 && ia == ib {
			s.Bins[ia].NCommon++
		}
	}
	outside, worst := 0, 0.0
	for j := 0; j < a.ncmp; j++ {
		x, y := va[j], vb[j]
		st := &s.Stats[j]
		st.Compared++
		if x == y || (x != x && y != y) {
			st.Hist[0]++
			continue
		}
		if math.IsNaN(x) || math.IsNaN(y) || math.IsInf(x, 0) || math.IsInf(y, 0) {
			st.NonFinite++
			st.Outside++
			outside++
			worst = 3
			continue
		}
		d := x - y
		if d > 0 {
			st.Above++
		} else {
			st.Below++
		}
		m := math.Max(math.Abs(x), math.Abs(y))
		t := a.o.Tol[j]
		out := math.Abs(d) > math.Max(t.Abs, t.Rel*m)
		if out {
			st.Outside++
			outside++
		}
		if a.blinded[j] {
			f := a.affine[j]
			// The product is rounded before the shift is added (an
			// explicit conversion forbids a fused multiply-add), so every
			// platform shows the same values, as blind/SPEC.md §6.1 says.
			x, y = float64(f.S*x)+f.O, float64(f.S*y)+f.O
			d = x - y
			m = math.Max(math.Abs(x), math.Abs(y))
		}
		ad := math.Abs(d)
		r := 0.0
		if m > 0 {
			r = ad / m
		}
		st.Hist[histBin(r)]++
		if ad >= st.MaxAbs.Value {
			st.MaxAbs.offer(ad, key)
		}
		if r >= st.MaxRel.Value {
			st.MaxRel.offer(r, key)
		}
		if out {
			worst = math.Max(worst, r)
		}
	}
	if outside > 0 {
		e := &a.ev
		e.Key, e.Outside, e.Worst, e.PosA, e.PosB = key, outside, worst, pa, pb
		for j := 0; j < a.ncmp; j++ {
			f := a.affine[j]
			e.A[j], e.B[j] = Value(float64(f.S*va[j])+f.O), Value(float64(f.S*vb[j])+f.O)
		}
		s.Worst = offerEvent(s.Worst, e, a.o.Worst)
	}
}

func (a *acc) writeListHeader() {
	a.list.WriteString(unmatchedColumns)
	for _, k := range a.o.Layout.Keys {
		a.list.WriteByte(',')
		a.list.WriteString(k)
	}
	a.list.WriteString(",position\n")
}

func (a *acc) writeUnmatched(side int, key []int64, pos int64) error {
	b := a.line[:0]
	b = append(b, "ab"[side], ',')
	for _, k := range key {
		b = strconv.AppendInt(b, k, 10)
		b = append(b, ',')
	}
	b = strconv.AppendInt(b, pos, 10)
	b = append(b, '\n')
	a.line = b
	_, err := a.list.Write(b)
	return err
}

// finishList writes the full unmatched list to the caller's writer.
func (a *acc) finishList(f *os.File) error {
	if a.s.Spilled {
		slices.SortFunc(a.deferred, func(x, y unmatched) int {
			if c := compareKeys(x.key[:a.nk], y.key[:a.nk]); c != 0 {
				return c
			}
			return int(x.side) - int(y.side)
		})
		for _, u := range a.deferred {
			if err := a.writeUnmatched(int(u.side), u.key[:a.nk], u.pos); err != nil {
				return err
			}
		}
		a.deferred = nil
	}
	if err := a.list.Flush(); err != nil {
		return fmt.Errorf("temporary file: %v", err)
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		return err
	}
	_, err := io.Copy(a.o.Unmatched, f)
	return err
}

// cursor walks the rows of one table in key order, checking the order.
type cursor struct {
	t      Source
	names  []string
	side   int
	nk, nv int
	b      *Batch
	i      int
	done   bool
	next   func() (*Batch, error)
	prev   []int64
	prevAt int64
	seen   bool
}

func (c *cursor) key() []int64 { return c.b.Keys[c.i*c.nk : (c.i+1)*c.nk] }
func (c *cursor) vals() []float64 {
	return c.b.Vals[c.i*c.nv : (c.i+1)*c.nv]
}

// advance moves to the next row. It returns errUnsorted when the keys
// go down, and an input error naming both rows when a key repeats.
func (c *cursor) advance() error {
	c.i++
	for c.b == nil || c.i >= c.b.N {
		b, err := c.next()
		if err != nil {
			return err
		}
		if b == nil {
			c.done = true
			return nil
		}
		c.b, c.i = b, 0
	}
	k := c.key()
	if c.seen {
		switch compareKeys(k, c.prev) {
		case 0:
			return errAt(c.t, c.b.Pos[c.i], "duplicate key %s (first at %s %d)",
				KeyText(c.names, k), c.t.Unit(), c.prevAt)
		case -1:
			return errUnsorted
		}
	}
	c.seen = true
	c.prev = append(c.prev[:0], k...)
	c.prevAt = c.b.Pos[c.i]
	return nil
}

// KeyText writes a key as "run=1, event=5".
func KeyText(names []string, k []int64) string {
	var b []byte
	for i, v := range k {
		if i > 0 {
			b = append(b, ", "...)
		}
		b = append(b, names[i]...)
		b = append(b, '=')
		b = strconv.AppendInt(b, v, 10)
	}
	return string(b)
}

// mergeJoin walks two key-ordered cursors together.
func mergeJoin(acc *acc, ca, cb *cursor) error {
	if err := ca.advance(); err != nil {
		return err
	}
	if err := cb.advance(); err != nil {
		return err
	}
	for !ca.done && !cb.done {
		switch c := compareKeys(ca.key(), cb.key()); {
		case c == 0:
			i, j := ca.i, cb.i
			acc.common(ca.key(), ca.vals(), ca.b.Cuts[i], ca.b.Pos[i], cb.vals(), cb.b.Cuts[j], cb.b.Pos[j])
			if err := ca.advance(); err != nil {
				return err
			}
			if err := cb.advance(); err != nil {
				return err
			}
		case c < 0:
			if err := acc.single(0, ca.key(), ca.vals(), ca.b.Cuts[ca.i], ca.b.Pos[ca.i]); err != nil {
				return err
			}
			if err := ca.advance(); err != nil {
				return err
			}
		default:
			if err := acc.single(1, cb.key(), cb.vals(), cb.b.Cuts[cb.i], cb.b.Pos[cb.i]); err != nil {
				return err
			}
			if err := cb.advance(); err != nil {
				return err
			}
		}
	}
	for _, c := range []*cursor{ca, cb} {
		for !c.done {
			if err := acc.single(c.side, c.key(), c.vals(), c.b.Cuts[c.i], c.b.Pos[c.i]); err != nil {
				return err
			}
			if err := c.advance(); err != nil {
				return err
			}
		}
	}
	return nil
}

// feed runs a table's scan in its own goroutine and hands out copies of
// its batches.
type feed struct {
	ch   chan *Batch
	free chan *Batch
	done chan struct{}
	err  error // the scan's result, set before ch is closed
	last *Batch
}

func startFeed(t Source, l Layout, progress func(n int)) *feed {
	f := &feed{ch: make(chan *Batch, 4), free: make(chan *Batch, 8), done: make(chan struct{})}
	go func() {
		defer close(f.ch)
		f.err = t.Scan(l, func(b *Batch) error {
			var nb *Batch
			select {
			case nb = <-f.free:
				nb.reset()
			default:
				nb = &Batch{}
			}
			nb.N = b.N
			nb.Keys = append(nb.Keys, b.Keys...)
			nb.Vals = append(nb.Vals, b.Vals...)
			nb.Cuts = append(nb.Cuts, b.Cuts...)
			nb.Pos = append(nb.Pos, b.Pos...)
			progress(b.N)
			select {
			case f.ch <- nb:
				return nil
			case <-f.done:
				return errStop
			}
		})
	}()
	return f
}

func (f *feed) next() (*Batch, error) {
	if f.last != nil {
		select {
		case f.free <- f.last:
		default:
		}
		f.last = nil
	}
	b, ok := <-f.ch
	if !ok {
		if f.err != nil && f.err != errStop {
			return nil, f.err
		}
		return nil, nil
	}
	f.last = b
	return b, nil
}

// stop ends the scan and waits for its goroutine.
func (f *feed) stop() {
	close(f.done)
	for range f.ch {
	}
}

func sortedMerge(a, b Source, acc *acc) error {
	l := acc.o.Layout
	fa := startFeed(a, l, func(n int) { acc.progress(0, n) })
	fb := startFeed(b, l, func(n int) { acc.progress(1, n) })
	defer fa.stop()
	defer fb.stop()
	ca := &cursor{t: a, names: l.Keys, side: 0, nk: acc.nk, nv: acc.nv, next: fa.next}
	cb := &cursor{t: b, names: l.Keys, side: 1, nk: acc.nk, nv: acc.nv, next: fb.next}
	return mergeJoin(acc, ca, cb)
}
