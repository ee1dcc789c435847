package table

import (
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
// separation; otherwise it is detected from the header.
func ReadFile(path string, opt CSVOptions) (*Table, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	if opt.Delim == 0 && strings.HasSuffix(strings.ToLower(path), ".tsv") {
		opt.Delim = '\t'
	}
	return ParseCSV(path, data, opt)
}

// ReadCSV reads a table from r; name is used in messages.
func ReadCSV(name string, r io.Reader, opt CSVOptions) (*Table, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, Errorf(name, 0, 0, "%v", err)
	}
	return ParseCSV(name, data, opt)
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
	if opt.Lo == "" {
		opt.Lo = DefaultLo
	}
	if opt.Hi == "" {
		opt.Hi = DefaultHi
	}
	if bytes.IndexByte(data, 0) >= 0 {
		line := 1 + bytes.Count(data[:bytes.IndexByte(data, 0)], []byte{'\n'})
		return nil, Errorf(name, line, 0, "binary data (NUL byte); expected a CSV or TSV table")
	}
	t := &Table{Source: name, LoName: opt.Lo, HiName: opt.Hi}
	var (
		header  []string
		colIdx  []int // field index -> destination column (-1 lo, -2 hi, >=0 Cols)
		lineNo  int
		delim   = opt.Delim
		fields  [][]byte
		fstarts []int
	)
	rest := data
	for len(rest) > 0 {
		lineNo++
		var line []byte
		if i := bytes.IndexByte(rest, '\n'); i >= 0 {
			line, rest = rest[:i], rest[i+1:]
		} else {
			line, rest = rest, nil
		}
		line = bytes.TrimSuffix(line, []byte{'\r'})
		if !utf8.Valid(line) {
			col := 1
			for col <= len(line) {
				r, size := utf8.DecodeRune(line[col-1:])
				if r == utf8.RuneError && size <= 1 {
					break
				}
				col += size
			}
			return nil, Errorf(name, lineNo, col, "invalid UTF-8; expected a text table")
		}
		trimmed := bytes.TrimLeft(line, " \t")
		if len(trimmed) == 0 || trimmed[0] == '#' {
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
		fields, fstarts = split(line, delim, fields[:0], fstarts[:0])
		if len(fields) != len(header) {
			col := len(line) + 1
			if len(fields) > len(header) {
				col = fstarts[len(header)] + 1
			}
			return nil, Errorf(name, lineNo, col, "row has %d fields, header has %d", len(fields), len(header))
		}
		for k, f := range fields {
			v, err := parseNumber(f)
			if err != "" {
				return nil, Errorf(name, lineNo, fstarts[k]+1, "column %q: %s", header[k], err)
			}
			switch d := colIdx[k]; d {
			case -1:
				t.Lo = append(t.Lo, v)
			case -2:
				t.Hi = append(t.Hi, v)
			default:
				t.Cols[d] = append(t.Cols[d], v)
			}
		}
		t.Lines = append(t.Lines, lineNo)
	}
	if header == nil {
		return nil, Errorf(name, 0, 0, "empty table: no header row")
	}
	if len(t.Lo) == 0 {
		return nil, Errorf(name, 0, 0, "table has a header but no bins")
	}
	if err := t.Validate(); err != nil {
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

// split cuts line at delim, trimming blanks, and records where each field
// starts (0-based byte offset of its first non-blank byte).
func split(line []byte, delim byte, fields [][]byte, starts []int) ([][]byte, []int) {
	pos := 0
	for {
		end := bytes.IndexByte(line[pos:], delim)
		var f []byte
		if end < 0 {
			f = line[pos:]
		} else {
			f = line[pos : pos+end]
		}
		lead := len(f) - len(bytes.TrimLeft(f, " \t"))
		fields = append(fields, bytes.TrimRight(f[lead:], " \t"))
		starts = append(starts, pos+lead)
		if end < 0 {
			return fields, starts
		}
		pos += end + 1
	}
}

// parseNumber parses a finite float64, returning a reason on failure.
func parseNumber(f []byte) (float64, string) {
	if len(f) == 0 {
		return 0, "empty field, expected a number"
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
