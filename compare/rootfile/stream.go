package rootfile

import (
	"bufio"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
	"unicode"

	"tandem/compare/table"
)

// The stream a decoding child writes on its standard output (version 1):
//
//	stream  = magic frame*
//	magic   = "tandem-rootfile 1\n"
//	frame   = kind:byte length:uint32le payload:byte[length]
//
// Frame kinds, in the order they may come:
//
//	'e'  JSON {"file","line","col","msg"}: the input is bad; last frame
//	't'  JSON tableMeta: a histogram's shape, then 2+len(names) 'f' frames
//	'f'  one column of bins float64s, IEEE 754 bits little-endian:
//	     lo, hi, then the value columns in the order of names
//	'c'  JSON [TreeColumn]: a tree's columns
//	'r'  whole rows of float64s (len(columns) per row), at most rowChunk
//	'z'  empty: the answer is complete; last frame
//
// A stream that ends before 'e' or 'z' means the child died. The reader
// bounds every frame by its kind before allocating it.
const streamMagic = "tandem-rootfile 1\n"

// Bounds of the stream.
const (
	maxMeta = 1 << 20 // a JSON frame
	// MaxBins is the largest number of bins a histogram or graph may have.
	MaxBins   = 1 << 22
	maxValues = 16   // value columns of a histogram table
	maxCols   = 4096 // columns of one ReadTree call
)

// tableMeta is the shape of a histogram table in the stream.
type tableMeta struct {
	Bins   int    `json:"bins"`
	LoName string `json:"lo_name"`
	HiName string `json:"hi_name"`
	// YLoName and YHiName name the y edges of a 2-D table (cells); the
	// y-edge frames then follow the x-edge frames.
	YLoName string   `json:"ylo_name,omitempty"`
	YHiName string   `json:"yhi_name,omitempty"`
	Names   []string `json:"names"`
	Notes   []string `json:"notes,omitempty"`
}

// wireError is a *table.Error in the stream.
type wireError struct {
	File string `json:"file"`
	Line int    `json:"line"`
	Col  int    `json:"col"`
	Msg  string `json:"msg"`
	Hint string `json:"hint,omitempty"`
}

// errMalformed marks a stream that breaks the protocol.
var errMalformed = errors.New("malformed answer")

// frameWriter writes the stream.
type frameWriter struct {
	w   *bufio.Writer
	err error
	buf []byte // reused by floats
}

func newFrameWriter(w io.Writer) *frameWriter {
	fw := &frameWriter{w: bufio.NewWriterSize(w, 64<<10)}
	_, fw.err = fw.w.WriteString(streamMagic)
	return fw
}

func (fw *frameWriter) frame(kind byte, payload []byte) error {
	if fw.err != nil {
		return fw.err
	}
	var head [5]byte
	head[0] = kind
	binary.LittleEndian.PutUint32(head[1:], uint32(len(payload)))
	if _, fw.err = fw.w.Write(head[:]); fw.err == nil {
		if _, fw.err = fw.w.Write(payload); fw.err == nil {
			fw.err = fw.w.Flush()
		}
	}
	return fw.err
}

func (fw *frameWriter) json(kind byte, v any) error {
	b, err := json.Marshal(v)
	if err != nil {
		return err
	}
	return fw.frame(kind, b)
}

func (fw *frameWriter) floats(kind byte, v []float64) error {
	if cap(fw.buf) < 8*len(v) {
		fw.buf = make([]byte, 8*len(v))
	}
	b := fw.buf[:8*len(v)]
	for i, x := range v {
		binary.LittleEndian.PutUint64(b[8*i:], math.Float64bits(x))
	}
	return fw.frame(kind, b)
}

// fail sends err as the final 'e' frame.
func (fw *frameWriter) fail(spec string, err error) error {
	var te *table.Error
	if !errors.As(err, &te) {
		te = table.Errorf(spec, 0, 0, "%v", err)
	}
	return fw.json('e', wireError{te.File, te.Line, te.Col, te.Msg, te.Hint})
}

func (fw *frameWriter) table(t *table.Table) error {
	m := tableMeta{Bins: t.Len(), LoName: t.LoName, HiName: t.HiName, Names: t.Names, Notes: t.Notes}
	if t.Is2D() {
		m.YLoName, m.YHiName = t.YLoName, t.YHiName
	}
	fw.json('t', m)
	fw.floats('f', t.Lo)
	fw.floats('f', t.Hi)
	if t.Is2D() {
		fw.floats('f', t.YLo)
		fw.floats('f', t.YHi)
	}
	for _, c := range t.Cols {
		fw.floats('f', c)
	}
	return fw.frame('z', nil)
}

// frameReader reads the stream, allocating no frame beyond its bound.
type frameReader struct {
	r   *bufio.Reader
	buf []byte // reused for 'r' frames
}

func newFrameReader(r io.Reader) (*frameReader, error) {
	fr := &frameReader{r: bufio.NewReaderSize(r, 64<<10)}
	magic := make([]byte, len(streamMagic))
	if _, err := io.ReadFull(fr.r, magic); err != nil {
		return nil, err
	}
	if string(magic) != streamMagic {
		return nil, fmt.Errorf("%w: the reader speaks another protocol (%q)", errMalformed, clean(string(magic), 200))
	}
	return fr, nil
}

// next reads one frame whose kind is among kinds, with a payload of at
// most max bytes.
func (fr *frameReader) next(kinds string, max int) (byte, []byte, error) {
	var head [5]byte
	if _, err := io.ReadFull(fr.r, head[:]); err != nil {
		return 0, nil, err
	}
	kind, n := head[0], binary.LittleEndian.Uint32(head[1:])
	if kind == 'e' {
		max = maxMeta
	}
	switch {
	case kind != 'e' && !strings.ContainsRune(kinds, rune(kind)):
		return 0, nil, fmt.Errorf("%w: frame %q where %q was expected", errMalformed, kind, kinds)
	case int64(n) > int64(max):
		return 0, nil, fmt.Errorf("%w: a %q frame of %d bytes, more than the %d allowed", errMalformed, kind, n, max)
	}
	var payload []byte
	if kind == 'r' {
		// rows are consumed before the next frame: reuse the buffer
		if cap(fr.buf) < int(n) {
			fr.buf = make([]byte, n)
		}
		payload = fr.buf[:n]
	} else {
		payload = make([]byte, n)
	}
	if _, err := io.ReadFull(fr.r, payload); err != nil {
		return 0, nil, err
	}
	return kind, payload, nil
}

// errorFrame decodes an 'e' payload.
func errorFrame(spec string, payload []byte) error {
	var w wireError
	if err := json.Unmarshal(payload, &w); err != nil || w.Msg == "" {
		return fmt.Errorf("%w: an unreadable error frame", errMalformed)
	}
	if w.File == "" {
		w.File = spec
	}
	return &table.Error{File: clean(w.File, 4096), Line: max(w.Line, 0), Col: max(w.Col, 0), Msg: clean(w.Msg, 2000), Hint: clean(w.Hint, 2000)}
}

// readTable decodes a histogram answer.
func (fr *frameReader) readTable(spec string) (*table.Table, error) {
	kind, payload, err := fr.next("t", maxMeta)
	if err != nil {
		return nil, err
	}
	if kind == 'e' {
		return nil, errorFrame(spec, payload)
	}
	var m tableMeta
	if err := json.Unmarshal(payload, &m); err != nil {
		return nil, fmt.Errorf("%w: %v", errMalformed, err)
	}
	if m.Bins < 0 || m.Bins > MaxBins || len(m.Names) > maxValues {
		return nil, fmt.Errorf("%w: %d bins and %d columns", errMalformed, m.Bins, len(m.Names))
	}
	edges := 2
	if m.YLoName != "" || m.YHiName != "" {
		edges = 4
	}
	cols := make([][]float64, edges+len(m.Names))
	for i := range cols {
		_, payload, err := fr.next("f", 8*m.Bins)
		if err == nil && len(payload) != 8*m.Bins {
			err = fmt.Errorf("%w: a column of %d bytes for %d bins", errMalformed, len(payload), m.Bins)
		}
		if err != nil {
			return nil, err
		}
		cols[i] = decodeFloats(payload)
	}
	if err := fr.end(); err != nil {
		return nil, err
	}
	t := &table.Table{Source: spec, LoName: m.LoName, HiName: m.HiName, Lo: cols[0], Hi: cols[1],
		Names: m.Names, Cols: cols[edges:], Notes: m.Notes}
	if edges == 4 {
		t.YLoName, t.YHiName, t.YLo, t.YHi = m.YLoName, m.YHiName, cols[2], cols[3]
	}
	if len(m.Names) == 0 {
		t.Cols = nil
	}
	if err := t.Validate(); err != nil {
		return nil, err
	}
	return t, nil
}

// readColumns decodes a TreeColumns answer.
func (fr *frameReader) readColumns(spec string) ([]TreeColumn, error) {
	kind, payload, err := fr.next("c", maxMeta)
	if err != nil {
		return nil, err
	}
	if kind == 'e' {
		return nil, errorFrame(spec, payload)
	}
	var cols []TreeColumn
	if err := json.Unmarshal(payload, &cols); err != nil {
		return nil, fmt.Errorf("%w: %v", errMalformed, err)
	}
	return cols, fr.end()
}

// readRows decodes a ReadTree answer of ncols columns, calling fn per row
// with the time limit paused (see child.paused).
func (fr *frameReader) readRows(spec string, ncols int, pause func(func() error) error, fn func([]float64) error) error {
	if ncols < 1 {
		return fmt.Errorf("%w: no columns", errMalformed)
	}
	row := make([]float64, ncols)
	for {
		kind, payload, err := fr.next("rz", 8*ncols*rowChunk)
		switch {
		case err != nil:
			return err
		case kind == 'e':
			return errorFrame(spec, payload)
		case kind == 'z':
			if len(payload) != 0 {
				return fmt.Errorf("%w: a final frame with a payload", errMalformed)
			}
			return nil
		case len(payload)%(8*ncols) != 0 || len(payload) == 0:
			return fmt.Errorf("%w: %d bytes are not whole rows of %d columns", errMalformed, len(payload), ncols)
		}
		err = pause(func() error {
			for off := 0; off < len(payload); off += 8 * ncols {
				for j := range row {
					row[j] = math.Float64frombits(binary.LittleEndian.Uint64(payload[off+8*j:]))
				}
				if err := fn(row); err != nil {
					return err
				}
			}
			return nil
		})
		if err != nil {
			return &callerError{err}
		}
	}
}

// callerError carries an error returned by ReadTree's fn through the
// stream reader unchanged.
type callerError struct{ err error }

func (e *callerError) Error() string { return e.err.Error() }

// end reads the final 'z' frame.
func (fr *frameReader) end() error {
	kind, payload, err := fr.next("z", 0)
	if err != nil {
		return err
	}
	if kind == 'e' {
		return fmt.Errorf("%w: an error frame after the answer", errMalformed)
	}
	_ = payload
	return nil
}

func decodeFloats(b []byte) []float64 {
	v := make([]float64, len(b)/8)
	for i := range v {
		v[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:]))
	}
	return v
}

// clean makes s safe to show in one line of a message: control and
// bidirectional-format characters become '?', and it is cut to n bytes.
func clean(s string, n int) string {
	if len(s) > n {
		s = s[:n] + "…"
	}
	return strings.Map(func(r rune) rune {
		if unicode.IsControl(r) || unicode.Is(unicode.Cf, r) {
			return '?'
		}
		return r
	}, strings.ToValidUTF8(s, "?"))
}
