package table

import (
	"bufio"
	"bytes"
	"io"
	"os"
	"strconv"
	"strings"
	"unicode/utf8"
	"unsafe"
)

// DefaultLo and DefaultHi are the bin-edge column names used when a caller
// names none.
const (
	DefaultLo = "lo"
	DefaultHi = "hi"
)

// CSVOptions controls [ParseCSV].
type CSVOptions struct {
	// Lo and Hi name the bin-edge columns; empty means DefaultLo/DefaultHi.
	Lo, Hi string
	// Delim is the field separator; 0 means detect from the header line
	// (a tab when the header has a tab and no comma, else a comma).
	Delim byte
}

// ReadFile reads a CSV or TSV table from a file. A ".tsv" suffix selects tab
// separation; otherwise it is detected from the header. The file is read
// in a stream, so memory is that of the table, not of the text.
func ReadFile(path string, opt CSVOptions) (*Table, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	defer f.Close()
	size := 0
	if fi, err := f.Stat(); err == nil {
		if fi.IsDir() {
			return nil, Errorf(path, 0, 0, "is a directory, not a table")
		}
		size = int(fi.Size())
	}
	if opt.Delim == 0 && strings.HasSuffix(strings.ToLower(path), ".tsv") {
		opt.Delim = '\t'
	}
	return parse(path, f, size, opt)
}

// ReadCSV reads a table from r; name is used in messages.
func ReadCSV(name string, r io.Reader, opt CSVOptions) (*Table, error) {
	return parse(name, r, 0, opt)
}

func unwrapPath(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

// ParseCSV parses delimited text: one header row of column names, then one
// row per bin. Lines starting with '#' (after optional blanks) and blank lines
// are ignored. Fields are trimmed of spaces; quoting is not supported, since
// every field is a column name or a number.
//
// Refused, with the line and column of the problem: empty or header-only
// input, NUL bytes or invalid UTF-8, rows with a different number of fields,
// numbers that do not parse or are NaN or infinite, duplicate or missing
// columns, and the bin-structure problems of [Table.Validate].
func ParseCSV(name string, data []byte, opt CSVOptions) (*Table, error) {
	return parse(name, bytes.NewReader(data), len(data), opt)
}

// parse reads a table line by line from r; size, when known, is the input
// length in bytes and sizes the columns once.
func parse(name string, r io.Reader, size int, opt CSVOptions) (*Table, error) {
	if opt.Lo == "" {
		opt.Lo = DefaultLo
	}
	if opt.Hi == "" {
		opt.Hi = DefaultHi
	}
	t := &Table{Source: name, LoName: opt.Lo, HiName: opt.Hi}
	var (
		header  []string
		colIdx  []int // field index -> destination column (-1 lo, -2 hi, >=0 Cols)
		lineNo  int
		delim   = opt.Delim
		fields  [][]byte
		fstarts []int
		sized   bool
		long    []byte // a line longer than the read buffer
	)
	br := bufio.NewReaderSize(r, 1<<20)
	for {
		line, err := br.ReadSlice('\n')
		if err == bufio.ErrBufferFull {
			long = append(long[:0], line...)
			for err == bufio.ErrBufferFull {
				line, err = br.ReadSlice('\n')
				long = append(long, line...)
			}
			line = long
		}
		if err != nil && err != io.EOF {
			return nil, Errorf(name, lineNo+1, 0, "%v", err)
		}
		if len(line) == 0 && err == io.EOF {
			break
		}
		lineNo++
		if n := len(line); n > 0 && line[n-1] == '\n' {
			line = line[:n-1]
		}
		if n := len(line); n > 0 && line[n-1] == '\r' {
			line = line[:n-1]
		}
		lead := 0
		for lead < len(line) && (line[lead] == ' ' || line[lead] == '\t') {
			lead++
		}
		// Rows the fast path parses whole are ASCII digits and
		// delimiters; every other line is checked for binary data and
		// UTF-8 before it is used (or skipped).
		plain := header != nil && lead == 0 && len(line) > 0
		if !plain {
			if err := checkText(name, lineNo, line); err != nil {
				return nil, err
			}
		}
		if lead == len(line) || line[lead] == '#' {
			continue
		}
		if header == nil {
			if delim == 0 {
				delim = ','
				if bytes.IndexByte(line, '\t') >= 0 && bytes.IndexByte(line, ',') < 0 {
					delim = '\t'
				}
			}
			fields, fstarts = split(line, delim, fields[:0], fstarts[:0])
			var err error
			header, colIdx, err = t.setHeader(name, lineNo, fields, fstarts)
			if err != nil {
				return nil, err
			}
			continue
		}
		if !sized && size > 0 {
			// Size the columns once from the first row's length: the
			// rows left fit in the bytes left, with a margin.
			sized = true
			rows := size/(len(line)+1)*5/4 + 16
			t.Lo, t.Hi = make([]float64, 0, rows), make([]float64, 0, rows)
			for k := range t.Cols {
				t.Cols[k] = make([]float64, 0, rows)
			}
		}
		// One pass over the row: find each field, trim it, parse it.
		k, pos := 0, 0
		for {
			if k >= len(header) {
				return nil, raggedErr(name, lineNo, line, delim, len(header))
			}
			// Most fields are plain decimals with no blanks: parse them
			// in the same pass that finds the delimiter.
			if v, end, ok := plainField(line, pos, delim); ok {
				t.put(colIdx[k], v)
				k++
				if end >= len(line) {
					break
				}
				pos = end + 1
				continue
			}
			if plain {
				if err := checkText(name, lineNo, line); err != nil {
					return nil, err
				}
				plain = false
			}
			start, stop, end := nextField(line, pos, delim)
			v, msg := parseNumber(line[start:stop])
			if msg != "" {
				if n := 1 + bytes.Count(line, []byte{delim}); n != len(header) {
					return nil, raggedErr(name, lineNo, line, delim, len(header))
				}
				return nil, Errorf(name, lineNo, start+1, "column %q: %s", header[k], msg)
			}
			t.put(colIdx[k], v)
			k++
			if end >= len(line) {
				break
			}
			pos = end + 1
		}
		if k != len(header) {
			return nil, raggedErr(name, lineNo, line, delim, len(header))
		}
		// Line numbers are kept only once rows stop being consecutive.
		switch row := len(t.Lo) - 1; {
		case row == 0:
			t.FirstLine = lineNo
		case t.Lines == nil && lineNo != t.FirstLine+row:
			t.Lines = make([]int32, row, row+16)
			for j := range t.Lines {
				t.Lines[j] = int32(t.FirstLine + j)
			}
			t.FirstLine = 0
			fallthrough
		case t.Lines != nil:
			t.Lines = append(t.Lines, int32(lineNo))
		}
		if err == io.EOF {
			break
		}
	}
	if header == nil {
		return nil, Errorf(name, 0, 0, "empty table: no header row")
	}
	if len(t.Lo) == 0 {
		return nil, Errorf(name, 0, 0, "table has a header but no bins")
	}
	// Every number was checked finite as it was parsed; check the bins.
	if err := t.validateBins(); err != nil {
		return nil, err
	}
	return t, nil
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
func checkText(name string, lineNo int, line []byte) error {
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

// nextField finds the field that begins at pos: its trimmed extent
// [start, stop) and the position end of the delimiter after it (len(line)
// for the last field).
func nextField(line []byte, pos int, delim byte) (start, stop, end int) {
	start = pos
	for start < len(line) && (line[start] == ' ' || line[start] == '\t') && line[start] != delim {
		start++
	}
	end = start
	for end < len(line) && line[end] != delim {
		end++
	}
	stop = end
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
func raggedErr(name string, lineNo int, line []byte, delim byte, want int) error {
	fields, starts := split(line, delim, nil, nil)
	col := len(line) + 1
	if len(fields) > want {
		col = starts[want] + 1
	}
	return Errorf(name, lineNo, col, "row has %d fields, header has %d", len(fields), want)
}

// split cuts line at delim, trimming blanks, and records where each field
// starts (0-based byte offset of its first non-blank byte).
func split(line []byte, delim byte, fields [][]byte, starts []int) ([][]byte, []int) {
	pos := 0
	for {
		start, stop, end := nextField(line, pos, delim)
		fields = append(fields, line[start:stop])
		starts = append(starts, start)
		if end >= len(line) {
			return fields, starts
		}
		pos = end + 1
	}
}

// pow10 holds the exactly representable powers of ten.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// fastDecimal parses plain decimals such as "-1234.5678" exactly: when the
// digits form an integer m < 2⁵³ and there are at most 22 fraction digits,
// m / 10^k is correctly rounded because both operands are exact (Clinger's
// fast path, W. D. Clinger, "How to read floating point numbers
// accurately", PLDI 1990). Anything else goes to strconv.ParseFloat.
func fastDecimal(f []byte) (float64, bool) {
	i, neg := 0, false
	switch f[0] {
	case '-':
		neg, i = true, 1
	case '+':
		i = 1
	}
	var m uint64
	digits, frac, dot := 0, 0, false
	for ; i < len(f); i++ {
		c := f[i]
		switch {
		case c >= '0' && c <= '9':
			if digits >= 16 {
				return 0, false
			}
			m = m*10 + uint64(c-'0')
			if m != 0 {
				digits++
			}
			if dot {
				frac++
			}
		case c == '.' && !dot:
			dot = true
		default:
			return 0, false
		}
	}
	if (digits == 0 && m == 0 && !hasDigit(f)) || m >= 1<<53 || frac > 22 {
		return 0, false
	}
	v := float64(m) / pow10[frac]
	if neg {
		v = -v
	}
	return v, true
}

// plainField parses the field at line[pos:] when it is a plain decimal
// ("-12.375") ending at the delimiter or the end of the line, under the same
// exactness conditions as fastDecimal. It returns the value and the
// position of the delimiter (or len(line)).
func plainField(line []byte, pos int, delim byte) (float64, int, bool) {
	i, neg := pos, false
	if i < len(line) && line[i] == '-' {
		neg, i = true, i+1
	}
	// Integer digits, then fraction digits, in two tight loops; m may
	// overflow on more than 19 digits, which the count check then rejects.
	var m uint64
	start := i
	for i < len(line) && line[i]-'0' <= 9 {
		m = m*10 + uint64(line[i]-'0')
		i++
	}
	digits, frac := i-start, 0
	if i < len(line) && line[i] == '.' {
		i++
		fstart := i
		for i < len(line) && line[i]-'0' <= 9 {
			m = m*10 + uint64(line[i]-'0')
			i++
		}
		frac = i - fstart
		digits += frac
	}
	if i < len(line) && line[i] != delim {
		return 0, 0, false
	}
	if digits == 0 || digits > 19 || m >= 1<<53 || frac > 22 {
		return 0, 0, false
	}
	v := float64(m) / pow10[frac]
	if neg {
		v = -v
	}
	return v, i, true
}

func hasDigit(f []byte) bool {
	for _, c := range f {
		if c >= '0' && c <= '9' {
			return true
		}
	}
	return false
}

// parseNumber parses a finite float64, returning a reason on failure.
func parseNumber(f []byte) (float64, string) {
	if len(f) == 0 {
		return 0, "empty field, expected a number"
	}
	if v, ok := fastDecimal(f); ok {
		return v, ""
	}
	// The string shares f's memory only for the duration of ParseFloat,
	// which does not retain it; this avoids one allocation per field.
	s := unsafe.String(&f[0], len(f))
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
			return 0, "number " + strconv.Quote(string(f)) + " is out of range"
		}
		return 0, "cannot parse " + strconv.Quote(string(f)) + " as a number"
	}
	if !finite(v) {
		return 0, "NaN and infinities are not allowed (" + string(f) + ")"
	}
	return v, ""
}
