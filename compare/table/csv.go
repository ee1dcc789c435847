package table

import (
	"bytes"
	"io"
	"os"
	"runtime"
	"strings"
	"unicode/utf8"
)

// DefaultLo and DefaultHi are the bin-edge column names used when a caller
// names none.
const (
	DefaultLo = "lo"
	DefaultHi = "hi"
)

// CSVOptions controls the readers of text tables (and the JSON and TOML
// layouts, which use Lo, Hi and Limits).
type CSVOptions struct {
	// Lo and Hi name the bin-edge columns; empty means DefaultLo/DefaultHi.
	Lo, Hi string
	// Delim is the field separator; 0 means detect from the header line
	// (a tab when the header has a tab and no comma, else a comma). A
	// header separated by semicolons is refused unless Delim is ';'.
	Delim byte
	// Limits bound the input; zero fields are the defaults.
	Limits Limits
}

// ReadFile reads a CSV or TSV table from a file. A ".tsv" suffix selects tab
// separation; otherwise it is detected from the header. The file is read
// in a stream, in blocks of whole lines parsed on all cores, so memory is
// that of the table, not of the text.
func ReadFile(path string, opt CSVOptions) (*Table, error) {
	lim := opt.Limits.resolved()
	f, size, err := openFile(path, lim)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if opt.Delim == 0 && strings.HasSuffix(strings.ToLower(path), ".tsv") {
		opt.Delim = '\t'
	}
	return parse(path, f, size, opt, blockBytes)
}

// ReadCSV reads a table from r; name is used in messages ([StdinName] for
// the standard input).
func ReadCSV(name string, r io.Reader, opt CSVOptions) (*Table, error) {
	return parse(name, r, 0, opt, blockBytes)
}

func unwrapPath(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

// ParseCSV parses delimited text: one header row of column names, then one
// row per bin. Lines starting with '#' (after optional blanks) and blank lines
// are ignored, and a UTF-8 byte order mark at the start is skipped. Fields
// are trimmed of spaces; quoting is not supported, since every field is a
// column name or a number. Numbers are plain decimals with an optional
// exponent (see the package documentation).
//
// Refused, with the line and column of the problem: empty or header-only
// input, NUL bytes or invalid UTF-8, rows with a different number of fields,
// numbers that do not parse, are NaN or infinite, overflow or fall below the
// smallest normal float64, duplicate or missing columns, a header separated
// by semicolons, input beyond the [Limits], and the bin-structure problems
// of [Table.Validate].
func ParseCSV(name string, data []byte, opt CSVOptions) (*Table, error) {
	return parse(name, bytes.NewReader(data), int64(len(data)), opt, blockBytes)
}

// parse reads a table from r in blocks of about target bytes; size, when
// known, is the input length in bytes and sizes the columns.
func parse(name string, r io.Reader, size int64, opt CSVOptions, target int) (*Table, error) {
	lim := opt.Limits.resolved()
	if size > lim.MaxBytes {
		return nil, tooLarge(name, lim)
	}
	if opt.Lo == "" {
		opt.Lo = DefaultLo
	}
	if opt.Hi == "" {
		opt.Hi = DefaultHi
	}
	t := &Table{Source: name, LoName: opt.Lo, HiName: opt.Hi}
	s := newSplitter(r, lim, target, runtime.GOMAXPROCS(0)+2)
	s.size = size
	p, first, err := t.header(name, s, opt)
	if err != nil {
		return nil, err
	}
	s.ncols = 2 + len(t.Names)
	first.cols = make([][]float64, s.ncols)
	m := &merger{t: t, lineOff: first.first - 1, size: size, maxCells: lim.MaxBytes / 8}
	if err := parseBlocks(name, s, p, first, m); err != nil {
		return nil, err
	}
	m.finish()
	if len(t.Lo) == 0 {
		return nil, Errorf(name, 0, 0, "table has a header but no bins")
	}
	// Every number was checked finite as it was parsed; check the bins.
	if err := t.validateBins(); err != nil {
		return nil, err
	}
	return t, nil
}

// header reads lines from the splitter until the header row, and returns
// the row parser it defines with the data left in the current block.
func (t *Table) header(name string, s *splitter, opt CSVOptions) (*rowParser, *block, error) {
	lineNo := 0
	for {
		b, err := s.next()
		if err != nil {
			err.File = name
			if err.Line > 0 {
				err.Line += lineNo
			}
			return nil, nil, err
		}
		if b == nil {
			if s.total == 0 {
				return nil, nil, emptyInput(name)
			}
			return nil, nil, Errorf(name, 0, 0, "empty table: no header row")
		}
		data := b.data
		for len(data) > 0 {
			var line []byte
			line, data = cutLine(data)
			lineNo++
			if lineNo == 1 {
				line = bytes.TrimPrefix(line, []byte("\xef\xbb\xbf"))
			}
			if len(line) > s.lim.MaxLineBytes {
				return nil, nil, lineTooLong(name, lineNo, line, s.lim)
			}
			if err := checkText(name, lineNo, line); err != nil {
				return nil, nil, err
			}
			lead := 0
			for lead < len(line) && (line[lead] == ' ' || line[lead] == '\t') {
				lead++
			}
			if lead == len(line) || line[lead] == '#' {
				continue
			}
			p, err := t.headerRow(name, lineNo, line, opt.Delim, s.lim)
			if err != nil {
				return nil, nil, err
			}
			b.data = data
			b.first = lineNo + 1
			return p, b, nil
		}
		s.release(b)
	}
}

// headerRow sets the columns of t from the header line.
func (t *Table) headerRow(name string, lineNo int, line []byte, delim byte, lim Limits) (*rowParser, error) {
	if delim == 0 {
		delim = ','
		hasComma, hasTab := bytes.IndexByte(line, ',') >= 0, bytes.IndexByte(line, '\t') >= 0
		if hasTab && !hasComma {
			delim = '\t'
		}
		if i := bytes.IndexByte(line, ';'); i >= 0 && !hasTab && !hasComma {
			e := Errorf(name, lineNo, i+1, "the header is separated by semicolons; tandem reads comma- or tab-separated tables with decimal points")
			e.Hint = "write the table with commas, or name the separator with --delimiter ';' (numbers need decimal points)"
			return nil, e
		}
	}
	if n := 1 + bytes.Count(line, []byte{delim}); n > lim.MaxColumns {
		e := Errorf(name, lineNo, 0, "the header has %d columns, more than the limit of %d", n, lim.MaxColumns)
		e.Hint = "raise the limit with " + flagMaxColumns
		return nil, e
	}
	fields, starts := SplitFields(line, delim, nil, nil)
	header, idx, err := t.setHeader(name, lineNo, fields, starts)
	if err != nil {
		return nil, err
	}
	p := &rowParser{name: name, header: header, delim: delim, maxLine: lim.MaxLineBytes, dest: make([]int, len(idx))}
	for k, d := range idx {
		switch d {
		case -1:
			p.dest[k] = 0
		case -2:
			p.dest[k] = 1
		default:
			p.dest[k] = 2 + d
		}
	}
	return p, nil
}

// cutLine returns the first line of data without its line ending, and the
// rest.
func cutLine(data []byte) (line, rest []byte) {
	if i := bytes.IndexByte(data, '\n'); i >= 0 {
		line, rest = data[:i], data[i+1:]
	} else {
		line = data
	}
	if n := len(line); n > 0 && line[n-1] == '\r' {
		line = line[:n-1]
	}
	return line, rest
}

// rowParser parses the data rows of one table; it is shared, read-only,
// by the goroutines that parse blocks.
type rowParser struct {
	name    string
	header  []string
	dest    []int // field → destination: 0 lower edges, 1 upper edges, 2+k Cols[k]
	delim   byte
	maxLine int
}

// rows parses the lines of b into its columns. Line numbers in b are
// relative: line 1 is the first line of the block.
func (p *rowParser) rows(b *block) {
	data := b.data
	rel := 0
	var prev edgeMemo
	for len(data) > 0 {
		var line []byte
		line, data = cutLine(data)
		rel++
		if len(line) > p.maxLine {
			b.err = lineTooLong(p.name, rel, line, Limits{MaxLineBytes: p.maxLine})
			return
		}
		lead := 0
		for lead < len(line) && (line[lead] == ' ' || line[lead] == '\t') {
			lead++
		}
		// Rows the fast path parses whole are ASCII digits, signs,
		// points, exponents and delimiters; every other line is checked
		// for binary data and UTF-8 before it is used (or skipped).
		plain := lead == 0 && len(line) > 0
		if !plain {
			if err := checkText(p.name, rel, line); err != nil {
				b.err = err
				return
			}
		}
		if lead == len(line) || line[lead] == '#' {
			continue
		}
		if err := p.row(b, rel, line, plain, &prev); err != nil {
			b.err = err
			return
		}
		switch {
		case b.nrows == 0:
			b.firstRow = rel
		case b.lines == nil && rel != b.firstRow+b.nrows:
			b.lines = b.lines[:0]
			for j := 0; j < b.nrows; j++ {
				b.lines = append(b.lines, int32(b.firstRow+j))
			}
			fallthrough
		case b.lines != nil:
			b.lines = append(b.lines, int32(rel))
		}
		b.nrows++
	}
	b.nlines = rel
}

// edgeMemo holds the text and value of the previous row's upper edge. In
// a table of adjacent bins the next lower edge is most often the very same
// text, which then needs no parsing: equal bytes give the equal value.
type edgeMemo struct {
	text []byte
	v    float64
}

// row parses one data line: one pass finds each field, trims it and
// parses it. prev is the upper edge of the row before (empty text for
// none), and is set to this row's.
func (p *rowParser) row(b *block, rel int, line []byte, plain bool, prev *edgeMemo) *Error {
	k, pos, delim := 0, 0, p.delim
	var hi edgeMemo
	for {
		if k >= len(p.header) {
			return raggedErr(p.name, rel, line, delim, len(p.header))
		}
		d := p.dest[k]
		var v float64
		var end int
		ok := false
		if n := len(prev.text); d == 0 && n > 0 && len(line)-pos >= n && (len(line)-pos == n || line[pos+n] == delim) && bytes.Equal(line[pos:pos+n], prev.text) {
			v, end, ok = prev.v, pos+n, true
		} else {
			// Most fields are numbers with no blanks: parse them in
			// the same pass that finds the delimiter.
			v, end, ok = scanField(line, pos, delim)
			if ok && d == 1 {
				hi = edgeMemo{line[pos:end], v}
			}
		}
		if !ok {
			if plain {
				if err := checkText(p.name, rel, line); err != nil {
					return err
				}
				plain = false
			}
			var start, stop int
			var msg string
			start, stop, end = NextField(line, pos, delim)
			v, msg = parseNumber(line[start:stop])
			if msg != "" {
				if n := 1 + bytes.Count(line, []byte{delim}); n != len(p.header) {
					return raggedErr(p.name, rel, line, delim, len(p.header))
				}
				return Errorf(p.name, rel, start+1, "column %q: %s", p.header[k], msg)
			}
		}
		b.cols[d] = append(b.cols[d], v)
		k++
		if end >= len(line) {
			break
		}
		pos = end + 1
	}
	if k != len(p.header) {
		return raggedErr(p.name, rel, line, delim, len(p.header))
	}
	*prev = hi
	return nil
}

func (t *Table) setHeader(name string, lineNo int, fields [][]byte, starts []int) ([]string, []int, error) {
	header := make([]string, len(fields))
	idx := make([]int, len(fields))
	seen := make(map[string]int, len(fields))
	for k, f := range fields {
		h := string(f)
		if h == "" {
			return nil, nil, Errorf(name, lineNo, starts[k]+1, "empty column name")
		}
		if prev, dup := seen[h]; dup {
			return nil, nil, Errorf(name, lineNo, starts[k]+1, "duplicate column %q (first at column %d)", h, starts[prev]+1)
		}
		seen[h] = k
		header[k] = h
		switch h {
		case t.LoName:
			idx[k] = -1
		case t.HiName:
			idx[k] = -2
		default:
			idx[k] = len(t.Names)
			t.Names = append(t.Names, h)
			t.Cols = append(t.Cols, nil)
		}
	}
	for _, need := range []string{t.LoName, t.HiName} {
		if _, ok := seen[need]; !ok {
			return nil, nil, Errorf(name, lineNo, 1, "missing bin-edge column %q (header has %s)", need, strings.Join(header, ", "))
		}
	}
	return header, idx, nil
}

// checkText refuses a line with a NUL byte or invalid UTF-8, pointing at
// the first bad byte.
func checkText(name string, lineNo int, line []byte) *Error {
	if i := bytes.IndexByte(line, 0); i >= 0 {
		return Errorf(name, lineNo, i+1, "binary data (NUL byte); expected a CSV or TSV table")
	}
	if utf8.Valid(line) {
		return nil
	}
	col := 1
	for col <= len(line) {
		r, size := utf8.DecodeRune(line[col-1:])
		if r == utf8.RuneError && size <= 1 {
			break
		}
		col += size
	}
	return Errorf(name, lineNo, col, "invalid UTF-8; expected a text table")
}

// NextField finds the field that begins at pos: its trimmed extent
// [start, stop) and the position end of the delimiter after it (len(line)
// for the last field).
func NextField(line []byte, pos int, delim byte) (start, stop, end int) {
	if i := bytes.IndexByte(line[pos:], delim); i >= 0 {
		end = pos + i
	} else {
		end = len(line)
	}
	start, stop = pos, end
	for start < stop && (line[start] == ' ' || line[start] == '\t') {
		start++
	}
	for stop > start && (line[stop-1] == ' ' || line[stop-1] == '\t') {
		stop--
	}
	return start, stop, end
}

// put appends v to the destination column d of setHeader's mapping: -1 the
// lower edges, -2 the upper edges, otherwise Cols[d].
func (t *Table) put(d int, v float64) {
	switch d {
	case -1:
		t.Lo = append(t.Lo, v)
	case -2:
		t.Hi = append(t.Hi, v)
	default:
		t.Cols[d] = append(t.Cols[d], v)
	}
}

// raggedErr reports a row with the wrong number of fields, pointing at the
// first extra field or at the end of a short row.
func raggedErr(name string, lineNo int, line []byte, delim byte, want int) *Error {
	fields, starts := SplitFields(line, delim, nil, nil)
	col := len(line) + 1
	if len(fields) > want {
		col = starts[want] + 1
	}
	return Errorf(name, lineNo, col, "row has %d fields, header has %d", len(fields), want)
}

// SplitFields cuts line at delim, trimming blanks, and records where each
// field starts (0-based byte offset of its first non-blank byte); the
// results are appended to fields and starts.
func SplitFields(line []byte, delim byte, fields [][]byte, starts []int) ([][]byte, []int) {
	pos := 0
	for {
		start, stop, end := NextField(line, pos, delim)
		fields = append(fields, line[start:stop])
		starts = append(starts, start)
		if end >= len(line) {
			return fields, starts
		}
		pos = end + 1
	}
}
