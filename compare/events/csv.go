package events

import (
	"bufio"
	"bytes"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"unsafe"

	"tandem/compare/table"
)

// csvTable is an event table in delimited text: a header row of column
// names, then one row per event. Lines starting with '#' and blank lines
// are ignored; fields are trimmed of blanks; there is no quoting, since
// every field used is a number or a boolean.
type csvTable struct {
	path  string
	delim byte
	cols  []ColumnInfo
	open  func() (io.ReadCloser, error)
}

// OpenCSV opens a CSV or TSV event table. It reads the header and the
// first row (to tell the columns' kinds) and nothing more; [Source.Scan]
// reads the file again from the start. A ".tsv" suffix or a header with
// tabs and no commas selects tab separation.
func OpenCSV(path string) (Source, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, table.Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	if fi.IsDir() {
		return nil, table.Errorf(path, 0, 0, "is a directory, not an event table")
	}
	t := &csvTable{path: path, open: func() (io.ReadCloser, error) { return os.Open(path) }}
	if strings.HasSuffix(strings.ToLower(path), ".tsv") {
		t.delim = '\t'
	}
	return t, t.readHead()
}

// NewCSV reads an event table from memory; name is used in messages.
func NewCSV(name string, data []byte) (Source, error) {
	t := &csvTable{path: name, open: func() (io.ReadCloser, error) {
		return io.NopCloser(bytes.NewReader(data)), nil
	}}
	return t, t.readHead()
}

func unwrapPath(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

func (t *csvTable) Name() string                   { return t.path }
func (t *csvTable) Unit() string                   { return "line" }
func (t *csvTable) Columns() ([]ColumnInfo, error) { return t.cols, nil }

// lines calls fn for each line that is not blank or a comment, with its
// 1-based number, until fn returns an error or the input ends.
func (t *csvTable) lines(fn func(no int64, line []byte) error) error {
	rc, err := t.open()
	if err != nil {
		return table.Errorf(t.path, 0, 0, "%v", unwrapPath(err))
	}
	defer rc.Close()
	br := bufio.NewReaderSize(rc, 1<<20)
	var no int64
	var long []byte
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
			return table.Errorf(t.path, int(no+1), 0, "%v", err)
		}
		if len(line) == 0 && err == io.EOF {
			return nil
		}
		no++
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
		if lead < len(line) && line[lead] != '#' {
			if ferr := fn(no, line); ferr != nil {
				return ferr
			}
		}
		if err == io.EOF {
			return nil
		}
	}
}

func (t *csvTable) readHead() error {
	var header [][]byte
	var starts []int
	var headerNo int64
	err := t.lines(func(no int64, line []byte) error {
		if err := checkText(t.path, no, line); err != nil {
			return err
		}
		if header == nil {
			if t.delim == 0 {
				t.delim = ','
				if bytes.IndexByte(line, '\t') >= 0 && bytes.IndexByte(line, ',') < 0 {
					t.delim = '\t'
				}
			}
			header, starts = table.SplitFields(line, t.delim, nil, nil)
			headerNo = no
			seen := map[string]int{}
			for k, h := range header {
				if len(h) == 0 {
					return table.Errorf(t.path, int(no), starts[k]+1, "empty column name")
				}
				if prev, dup := seen[string(h)]; dup {
					return table.Errorf(t.path, int(no), starts[k]+1, "duplicate column %q (first at column %d)", h, starts[prev]+1)
				}
				seen[string(h)] = k
				t.cols = append(t.cols, ColumnInfo{Name: string(h)})
			}
			return nil
		}
		fields, fstarts := table.SplitFields(line, t.delim, nil, nil)
		if len(fields) != len(header) {
			return raggedErr(t.path, no, line, fields, fstarts, len(header))
		}
		for k, f := range fields {
			t.cols[k].Kind = kindOf(f)
		}
		return errStop
	})
	switch {
	case err == errStop:
		return nil
	case err != nil:
		return err
	case header == nil:
		return table.Errorf(t.path, 0, 0, "empty table: no header row")
	}
	return table.Errorf(t.path, int(headerNo), 0, "table has a header but no rows")
}

// kindOf guesses a column's kind from one field.
func kindOf(f []byte) Kind {
	if _, ok := parseInt(f); ok {
		return Int
	}
	if _, ok := parseBool(f); ok {
		return Bool
	}
	if _, ok := parseFloat(f); ok {
		return Float
	}
	return Other
}

// field roles in a scan
const (
	skip = iota
	asKey
	asVar
	asCut
)

func (t *csvTable) Scan(l Layout, fn func(*Batch) error) error {
	role := make([]uint8, len(t.cols))
	dest := make([]int, len(t.cols))
	for k, c := range t.cols {
		for _, set := range []struct {
			names []string
			role  uint8
		}{{l.Keys, asKey}, {l.Vars, asVar}, {l.Cuts, asCut}} {
			for j, n := range set.names {
				if n == c.Name {
					role[k], dest[k] = set.role, j
				}
			}
		}
	}
	nk, nv := len(l.Keys), len(l.Vars)
	b := &Batch{}
	header := true
	keys := make([]int64, nk)
	vals := make([]float64, nv)
	err := t.lines(func(no int64, line []byte) error {
		if header {
			header = false
			return nil
		}
		var cuts uint64
		k, pos := 0, 0
		for {
			if k >= len(t.cols) {
				return t.rowErr(no, line)
			}
			start, stop, end := table.NextField(line, pos, t.delim)
			f := line[start:stop]
			switch role[k] {
			case asKey:
				v, ok := parseInt(f)
				if !ok {
					return t.fieldErr(no, line, start, k, "key column %q: %s is not an integer", f)
				}
				keys[dest[k]] = v
			case asVar:
				v, ok := parseFloat(f)
				if !ok {
					var bv bool
					if bv, ok = parseBool(f); !ok {
						return t.fieldErr(no, line, start, k, "column %q: cannot parse %s as a number or a boolean", f)
					}
					v = float64(bit(bv))
				}
				vals[dest[k]] = v
			case asCut:
				v, ok := parseBool(f)
				if !ok {
					return t.fieldErr(no, line, start, k, "cut column %q: %s is not a boolean (1/0, true/false, T/F in any case)", f)
				}
				if v {
					cuts |= 1 << dest[k]
				}
			}
			k++
			if end >= len(line) {
				break
			}
			pos = end + 1
		}
		if k != len(t.cols) {
			return t.rowErr(no, line)
		}
		b.Keys = append(b.Keys, keys...)
		b.Vals = append(b.Vals, vals...)
		b.Cuts = append(b.Cuts, cuts)
		b.Pos = append(b.Pos, no)
		return b.added(fn)
	})
	return b.last(err, fn)
}

// fieldErr reports a field that does not parse, after checking that the
// line is text and has the right number of fields (the likelier cause).
func (t *csvTable) fieldErr(no int64, line []byte, start, k int, format string, f []byte) error {
	if err := checkText(t.path, no, line); err != nil {
		return err
	}
	if fields, _ := table.SplitFields(line, t.delim, nil, nil); len(fields) != len(t.cols) {
		return t.rowErr(no, line)
	}
	return table.Errorf(t.path, int(no), start+1, format, t.cols[k].Name, strconv.Quote(string(f)))
}

func (t *csvTable) rowErr(no int64, line []byte) error {
	if err := checkText(t.path, no, line); err != nil {
		return err
	}
	fields, starts := table.SplitFields(line, t.delim, nil, nil)
	return raggedErr(t.path, no, line, fields, starts, len(t.cols))
}

func raggedErr(name string, no int64, line []byte, fields [][]byte, starts []int, want int) error {
	col := len(line) + 1
	if len(fields) > want {
		col = starts[want] + 1
	}
	return table.Errorf(name, int(no), col, "row has %d fields, header has %d", len(fields), want)
}

// checkText refuses a line with a NUL byte or invalid UTF-8, as the
// table reader does.
func checkText(name string, no int64, line []byte) error {
	if err := table.CheckText(name, int(no), line); err != nil {
		return err
	}
	return nil
}

// parseInt parses a decimal integer that fits in int64.
func parseInt(f []byte) (int64, bool) {
	i, neg := 0, false
	if len(f) > 0 && (f[0] == '-' || f[0] == '+') {
		neg, i = f[0] == '-', 1
	}
	if i == len(f) || len(f)-i > 19 {
		if len(f)-i > 19 {
			v, err := strconv.ParseInt(string(f), 10, 64)
			return v, err == nil
		}
		return 0, false
	}
	var m uint64
	for ; i < len(f); i++ {
		c := f[i] - '0'
		if c > 9 {
			return 0, false
		}
		m = m*10 + uint64(c)
	}
	if neg {
		if m > 1<<63 {
			return 0, false
		}
		return -int64(m), true
	}
	if m >= 1<<63 {
		return 0, false
	}
	return int64(m), true
}

// parseBool reads a boolean as the tools that write event tables spell
// it: 1 and 0 (C, ROOT, numpy integers), true and false in any case
// (pandas writes True/False, R TRUE/FALSE, JSON-minded tools true/false)
// and T and F in either case (R's and Fortran's short forms).
func parseBool(f []byte) (bool, bool) {
	switch len(f) {
	case 1:
		switch f[0] {
		case '1', 'T', 't':
			return true, true
		case '0', 'F', 'f':
			return false, true
		}
	case 4:
		if bytes.EqualFold(f, []byte("true")) {
			return true, true
		}
	case 5:
		if bytes.EqualFold(f, []byte("false")) {
			return false, true
		}
	}
	return false, false
}

// bit is 1 for true and 0 for false.
func bit(v bool) int {
	if v {
		return 1
	}
	return 0
}

// parseFloat parses a number: the strict grammar of compare/table, with its
// exact fast paths, and strconv.ParseFloat for what that refuses (event
// tables may hold "nan" and "inf", and values that overflow or fall into
// the subnormal range are kept as strconv rounds them).
func parseFloat(f []byte) (float64, bool) {
	if v, msg := table.ParseNumber(f); msg == "" {
		return v, true
	}
	if len(f) == 0 {
		return 0, false
	}
	v, err := strconv.ParseFloat(unsafe.String(&f[0], len(f)), 64)
	if err != nil {
		if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
			return v, !math.IsNaN(v) // ±Inf or a denormal rounded to 0
		}
		return 0, false
	}
	return v, true
}
