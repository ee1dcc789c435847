package table

import (
	"bytes"
	"io"
	"runtime"
	"sync"
)

// A text table is read in blocks of whole lines. Every block after the
// header is parsed on its own, on all cores, into block-local columns with
// block-relative line numbers; one goroutine then appends the blocks in
// file order, turning their line numbers into file lines. The first error
// in file order wins, so messages are those of a sequential reading.

// blockBytes is the target size of a block.
const blockBytes = 1 << 20

// block is a run of whole lines and what parsing them gave.
type block struct {
	buf  []byte
	data []byte
	// first is the file line of data's first line (header block only).
	first int
	// cols are the parsed columns: 0 lower edges, 1 upper edges, 2+k Cols[k].
	cols [][]float64
	// nrows rows were parsed from nlines lines; the first row is on
	// relative line firstRow, and lines lists every row's relative line
	// when the rows are not consecutive (nil otherwise).
	nrows, nlines, firstRow int
	lines                   []int32
	err                     *Error
	done                    chan struct{}
}

// reset readies b for reuse with ncols columns.
func (b *block) reset(ncols int) {
	b.data, b.first, b.nrows, b.nlines, b.firstRow, b.err = nil, 0, 0, 0, 0, nil
	b.lines = nil
	if len(b.cols) != ncols {
		b.cols = make([][]float64, ncols)
	}
	for k := range b.cols {
		b.cols[k] = b.cols[k][:0]
	}
}

// splitter cuts the input into blocks of about target bytes of whole lines.
type splitter struct {
	r      io.Reader
	lim    Limits
	target int
	carry  []byte // the partial line after the last block
	total  int64  // bytes read
	size   int64  // input size when known, else 0
	eof    bool
	ncols  int
	// free holds blocks for reuse; at most pool blocks exist at once.
	free      chan *block
	pool, all int
	stop      chan struct{}
}

func newSplitter(r io.Reader, lim Limits, target, pool int) *splitter {
	return &splitter{r: r, lim: lim, target: target, pool: pool, free: make(chan *block, pool), stop: make(chan struct{})}
}

// get returns a free block, waiting for one when pool blocks are in use;
// nil when the reading was stopped.
func (s *splitter) get() *block {
	var b *block
	select {
	case b = <-s.free:
	default:
		if s.all < s.pool {
			s.all++
			b = &block{}
		} else {
			select {
			case b = <-s.free:
			case <-s.stop:
				return nil
			}
		}
	}
	b.reset(s.ncols)
	return b
}

// drop lets go of the blocks kept for reuse and of the carried text.
func (s *splitter) drop() {
	for {
		select {
		case <-s.free:
		default:
			s.carry = nil
			return
		}
	}
}

// release returns b for reuse.
func (s *splitter) release(b *block) {
	select {
	case s.free <- b:
	default:
	}
}

// next returns the next block of whole lines (the last may end without a
// newline), or nil at the end of the input. A line longer than the limit,
// an input beyond the size limit and read errors are errors; a long line
// is reported on relative line 1, the first line after the blocks so far.
func (s *splitter) next() (*block, *Error) {
	select {
	case <-s.stop:
		return nil, nil
	default:
	}
	if s.eof && len(s.carry) == 0 {
		return nil, nil
	}
	b := s.get()
	if b == nil {
		return nil, nil
	}
	// Room for the target and a line of ordinary length; a longer line
	// grows the buffer, up to the line limit.
	need := s.target + 64<<10
	if s.size > 0 && s.size-s.total+int64(len(s.carry)) < int64(need) {
		need = int(s.size-s.total) + len(s.carry) + 2 // all that is left
	}
	if cap(b.buf) < need {
		b.buf = make([]byte, 0, need)
	}
	buf := append(b.buf[:0], s.carry...)
	s.carry = s.carry[:0]
	for {
		if s.eof {
			if len(buf) == 0 {
				s.release(b)
				return nil, nil
			}
			b.buf, b.data = buf, buf
			return b, nil
		}
		if len(buf) >= s.target {
			if i := bytes.LastIndexByte(buf, '\n'); i >= 0 {
				s.carry = append(s.carry, buf[i+1:]...)
				b.buf, b.data = buf, buf[:i+1]
				return b, nil
			}
			if len(buf) > s.lim.MaxLineBytes {
				return nil, lineTooLong("", 1, buf, s.lim)
			}
		}
		if len(buf) == cap(buf) {
			buf = append(buf, make([]byte, min(len(buf), s.lim.MaxLineBytes+1))...)[:len(buf)]
		}
		n, err := s.r.Read(buf[len(buf):cap(buf)])
		buf = buf[:len(buf)+n]
		s.total += int64(n)
		if s.total > s.lim.MaxBytes {
			return nil, tooLarge("", s.lim)
		}
		if err == io.EOF {
			s.eof = true
		} else if err != nil {
			return nil, &Error{Msg: unwrapPath(err).Error()}
		}
	}
}

// merger appends parsed blocks to the table in file order.
//
// When the input size is known (a regular file) the columns are sized
// once from the rows per byte seen so far. When it is not (a pipe), the
// numbers are copied into slabs and joined once at the
// end ([merger.finish]), so a stream costs the memory of its numbers, as
// a file does, instead of regrowing every column at every block.
type merger struct {
	t       *Table
	lineOff int   // file lines before the next block
	size    int64 // input size when known, for sizing the columns
	bytes   int64 // input bytes up to the next block
	rows    int   // rows merged so far
	// maxCells bounds the numbers held: Limits.MaxBytes of float64s.
	maxCells int64

	// index is the destination of a row-index column to check and leave
	// out, or -1; indexBase is its first value (0 or 1).
	index     int
	indexBase float64
	// chunks holds, for an input of unknown size, each destination's
	// numbers in slabs: 0 lower edges, 1 upper edges, 2+k Cols[k].
	chunks [][][]float64
}

// cellLimit is the refusal of a table whose numbers would take more memory
// than the input limit allows.
func cellLimit(name string, line, rows, ncols int, lim int64) *Error {
	e := Errorf(name, line, 0, "the table's numbers need more than the limit of %d bytes of memory (%d rows of %d columns so far, 8 bytes a number)", lim, rows, ncols)
	e.Hint = "raise the limit with " + flagMaxBytes + ", which bounds both the input and the memory of its numbers"
	return e
}

// add appends b to the table, or returns b's error with file lines.
func (m *merger) add(name string, b *block) *Error {
	if b.err != nil {
		e := b.err
		e.File = name
		if e.Line > 0 {
			e.Line += m.lineOff
		}
		// The rows before the error are checked as a whole block's would
		// be, so the first problem in the file is the one reported,
		// however the input was cut into blocks.
		if m.index >= 0 && b.nrows > 0 && m.index < len(b.cols) {
			if ie := m.checkIndex(name, b); ie != nil && (e.Line <= 0 || ie.Line < e.Line) {
				return ie
			}
		}
		return e
	}
	m.bytes += int64(len(b.data))
	t := m.t
	if b.nrows > 0 {
		rows := m.rows
		ncols := len(b.cols)
		need := rows + b.nrows
		if m.index >= 0 {
			if err := m.checkIndex(name, b); err != nil {
				return err
			}
		}
		if m.maxCells > 0 && int64(need)*int64(ncols) > m.maxCells {
			return cellLimit(name, m.lineOff+b.firstRow, need, ncols, m.maxCells*8)
		}
		switch {
		case m.size <= 0:
			if m.chunks == nil {
				m.chunks = make([][][]float64, ncols)
			}
			// Copy the block's columns into slabs of an eighth of
			// the rows so far (at least 4096 rows), so the slack is
			// bounded and nothing is copied twice before the end.
			for d, c := range b.cols {
				if d != m.index {
					m.chunks[d] = appendSlab(m.chunks[d], c, rows)
				}
			}
		default:
			if need > cap(t.Lo) {
				// Size the columns from the rows per byte so far,
				// with a margin, instead of growing them by halves;
				// never beyond what the limit allows.
				want := need
				if m.bytes > 0 {
					want = max(need, int(float64(need)*float64(m.size)/float64(m.bytes)*1.03)+64)
				}
				if m.maxCells > 0 {
					want = max(need, min(want, int(m.maxCells/int64(ncols))))
				}
				t.Lo = growTo(t.Lo, want)
				t.Hi = growTo(t.Hi, want)
				for k := range t.Cols {
					t.Cols[k] = growTo(t.Cols[k], want)
				}
			}
			t.Lo = append(t.Lo, b.cols[0]...)
			t.Hi = append(t.Hi, b.cols[1]...)
			for k := range t.Cols {
				t.Cols[k] = append(t.Cols[k], b.cols[2+k]...)
			}
		}
		m.rows = need
		// Line numbers are kept only once rows stop being consecutive.
		first := m.lineOff + b.firstRow
		switch {
		case rows == 0 && b.lines == nil:
			t.FirstLine = first
		case t.Lines == nil && b.lines == nil && first == t.FirstLine+rows:
		default:
			if t.Lines == nil {
				t.Lines = make([]int32, rows, max(cap(t.Lo), need))
				for j := range t.Lines {
					t.Lines[j] = int32(t.FirstLine + j)
				}
				t.FirstLine = 0
			}
			if b.lines != nil {
				for _, l := range b.lines {
					t.Lines = append(t.Lines, int32(m.lineOff)+l)
				}
			} else {
				for j := 0; j < b.nrows; j++ {
					t.Lines = append(t.Lines, int32(first+j))
				}
			}
		}
	}
	m.lineOff += b.nlines
	return nil
}

// checkIndex checks that the row-index column of b numbers the rows on
// from the rows merged so far: 0, 1, 2, … or 1, 2, 3, ….
func (m *merger) checkIndex(name string, b *block) *Error {
	vals := b.cols[m.index]
	vals = vals[:min(len(vals), b.nrows)] // a row cut short by an error is not a row
	for j, v := range vals {
		row := m.rows + j
		if row == 0 && (v == 0 || v == 1) {
			m.indexBase = v
			continue
		}
		if want := m.indexBase + float64(row); v != want {
			line := m.lineOff + b.firstRow + j
			if b.lines != nil {
				line = m.lineOff + int(b.lines[j])
			}
			if row == 0 {
				want = 0
			}
			e := Errorf(name, line, 1, "the first column has no name and is not a row index: %s where %s was expected", Format(v), Format(want))
			e.Hint = "name the column in the header, or write the table without its index (pandas: to_csv(path, index=False); R: write.csv(x, path, row.names=FALSE))"
			return e
		}
	}
	return nil
}

// appendSlab appends v to the last slab of slabs, starting a new slab
// of max(4096, rows/8) elements (or len(v), if larger) when it is full.
func appendSlab(slabs [][]float64, v []float64, rows int) [][]float64 {
	for len(v) > 0 {
		n := len(slabs)
		if n == 0 || len(slabs[n-1]) == cap(slabs[n-1]) {
			slabs = append(slabs, make([]float64, 0, max(4096, rows/8)))
			n++
		}
		last := slabs[n-1]
		k := min(len(v), cap(last)-len(last))
		slabs[n-1] = append(last, v[:k]...)
		v = v[k:]
	}
	return slabs
}

// finish joins the chunks of an input of unknown size into the table's
// columns, one column at a time, dropping each column's chunks as it goes.
func (m *merger) finish() {
	if m.chunks == nil {
		return
	}
	t := m.t
	join := func(d int) []float64 {
		if len(m.chunks[d]) == 1 {
			// A table that fits one slab (most piped tables) keeps it.
			out := m.chunks[d][0]
			m.chunks[d] = nil
			return out
		}
		out := make([]float64, 0, m.rows)
		for j, c := range m.chunks[d] {
			out = append(out, c...)
			m.chunks[d][j] = nil
		}
		m.chunks[d] = nil
		return out
	}
	t.Lo = join(0)
	t.Hi = join(1)
	for k := range t.Cols {
		t.Cols[k] = join(2 + k)
	}
	m.chunks = nil
}

// growTo returns s with room for n elements.
func growTo(s []float64, n int) []float64 {
	if n <= cap(s) {
		return s
	}
	out := make([]float64, len(s), n)
	copy(out, s)
	return out
}

// parseBlocks parses the data blocks, starting with first, on up to
// GOMAXPROCS goroutines, and merges them in order.
func parseBlocks(name string, s *splitter, p *rowParser, first *block, m *merger) *Error {
	workers := runtime.GOMAXPROCS(0)
	if workers == 1 || (s.eof && len(s.carry) == 0) {
		for b := first; b != nil; {
			p.rows(b)
			if err := m.add(name, b); err != nil {
				return err
			}
			s.release(b)
			var err *Error
			if b, err = s.next(); err != nil {
				return m.add(name, &block{err: err})
			}
		}
		return nil
	}
	jobs := make(chan *block, s.pool)
	order := make(chan *block, s.pool+1)
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for b := range jobs {
				p.rows(b)
				close(b.done)
			}
		}()
	}
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(order)
		defer close(jobs)
		for b := first; b != nil; {
			b.done = make(chan struct{})
			order <- b
			jobs <- b
			var err *Error
			if b, err = s.next(); err != nil {
				eb := &block{err: err, done: make(chan struct{})}
				close(eb.done)
				order <- eb
				return
			}
		}
	}()
	var failed *Error
	for b := range order {
		<-b.done
		if failed != nil {
			continue
		}
		if failed = m.add(name, b); failed != nil {
			close(s.stop)
			continue
		}
		s.release(b)
	}
	wg.Wait()
	return failed
}
