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
type merger struct {
	t       *Table
	lineOff int   // file lines before the next block
	size    int64 // input size when known, for sizing the columns
	bytes   int64 // input bytes up to the next block
}

// add appends b to the table, or returns b's error with file lines.
func (m *merger) add(name string, b *block) *Error {
	if b.err != nil {
		e := b.err
		e.File = name
		if e.Line > 0 {
			e.Line += m.lineOff
		}
		return e
	}
	m.bytes += int64(len(b.data))
	t := m.t
	if b.nrows > 0 {
		rows := len(t.Lo)
		if need := rows + b.nrows; need > cap(t.Lo) {
			// Size the columns from the rows per byte so far, with a
			// margin, instead of growing them by halves.
			want := need
			if m.size > 0 && m.bytes > 0 {
				want = max(need, int(float64(need)*float64(m.size)/float64(m.bytes)*1.03)+64)
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
		// Line numbers are kept only once rows stop being consecutive.
		first := m.lineOff + b.firstRow
		switch {
		case rows == 0 && b.lines == nil:
			t.FirstLine = first
		case t.Lines == nil && b.lines == nil && first == t.FirstLine+rows:
		default:
			if t.Lines == nil {
				t.Lines = make([]int32, rows, cap(t.Lo))
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
