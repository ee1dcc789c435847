package table

import (
	"bytes"
	"fmt"
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
	// In a 2-D table they are the x edges.
	Lo, Hi string
	// YLo and YHi name the y-edge columns of a 2-D table (see
	// [Table.Is2D]); both empty for a 1-D table.
	YLo, YHi string
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
// the standard input). When r is a regular file (a standard input
// redirected from a file) its size sizes the columns, as [ReadFile] does;
// otherwise (a pipe) the numbers are gathered in slabs and joined once.
func ReadCSV(name string, r io.Reader, opt CSVOptions) (*Table, error) {
	var size int64
	if f, ok := r.(*os.File); ok {
		if fi, err := f.Stat(); err == nil && fi.Mode().IsRegular() {
			if off, err := f.Seek(0, io.SeekCurrent); err == nil && off <= fi.Size() {
				size = fi.Size() - off
			}
		}
	}
	return parse(name, r, size, opt, blockBytes)
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
// are trimmed of spaces. A field may be quoted as RFC 4180 says ("lo",
// "1.5", "a ""b"""), as R's write.csv and Python's csv module write; a
// quoted field must close on its line. An unnamed first column holding
// 0, 1, 2, … or 1, 2, 3, … is a row index (pandas' to_csv and R's
// write.csv write one by default) and is left out with a note. When the
// first line that is not a comment holds numbers, the column names are
// taken from a commented first line that names the bin-edge columns, as
// numpy's savetxt writes "# lo,hi,rate,stat". Numbers are plain decimals with an optional
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
	if p.index >= 0 {
		s.ncols++
	}
	first.cols = make([][]float64, s.ncols)
	m := &merger{t: t, lineOff: first.first - 1, size: size, maxCells: lim.MaxBytes / 8, index: p.index}
	if err := parseBlocks(name, s, p, first, m); err != nil {
		return nil, err
	}
	// Let the blocks go before the slabs of a stream are joined.
	first = nil
	s.drop()
	m.finish()
	if p.index >= 0 && m.rows > 0 {
		t.Notes = append(t.Notes, fmt.Sprintf("%s: the unnamed first column numbers the rows %s to %s (a row index, as pandas' to_csv and R's write.csv write by default); left out", name, Format(m.indexBase), Format(m.indexBase+float64(m.rows-1))))
	}
	if len(t.Lo) == 0 {
		return nil, Errorf(name, 0, 0, "table has a header but no bins")
	}
	if err := t.takeY(opt); err != nil {
		return nil, err
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
	var firstComment []byte // the text after '#' when line 1 is a comment
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
			rest := data
			line, data = cutLine(data)
			lineNo++
			if lineNo == 1 {
				line = bytes.TrimPrefix(line, []byte("\xef\xbb\xbf"))
			}
			if len(line) > s.lim.MaxLineBytes {
				return nil, nil, lineTooLong(name, lineNo, line, s.lim)
			}
			if err := CheckText(name, lineNo, line); err != nil {
				return nil, nil, err
			}
			lead := 0
			for lead < len(line) && (line[lead] == ' ' || line[lead] == '\t') {
				lead++
			}
			if lead < len(line) && line[lead] == '#' && lineNo == 1 {
				firstComment = bytes.Clone(line[lead+1:])
			}
			if lead == len(line) || line[lead] == '#' {
				continue
			}
			if numericRow(line, opt.Delim, t.LoName, t.HiName) {
				// Numbers where the names should be: numpy's savetxt
				// writes its header as a comment, "# lo,hi,…".
				p, err := t.commentHeader(name, lineNo, line, firstComment, opt, s.lim)
				if err != nil {
					return nil, nil, err
				}
				b.data = rest
				b.first = lineNo
				return p, b, nil
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
	fields, starts, qerr := splitQuoted(name, lineNo, line, delim)
	if qerr != nil {
		return nil, qerr
	}
	p, err := t.rowParser(name, lineNo, fields, starts, delim, lim)
	if e, ok := err.(*Error); ok && len(fields) == 1 && bytes.ContainsAny(bytes.TrimSpace(line), " ") && e.Hint == "" {
		e.Hint = "the fields seem separated by spaces; tandem reads comma- or tab-separated tables (numpy: savetxt(..., delimiter=','))"
	}
	return p, err
}

// rowParser sets the columns of t from the header fields and returns the
// parser of the data rows. An unnamed first column is taken for a row
// index (pandas' to_csv and R's write.csv write one by default): it is
// parsed, checked to number the rows 0, 1, 2, … or 1, 2, 3, …, and left
// out of the table with a note.
func (t *Table) rowParser(name string, lineNo int, fields [][]byte, starts []int, delim byte, lim Limits) (*rowParser, error) {
	index := len(fields) > 1 && len(fields[0]) == 0
	var header []string
	var idx []int
	var err error
	if index {
		header, idx, err = t.setHeader(name, lineNo, fields[1:], starts[1:])
		header = append([]string{""}, header...)
		idx = append([]int{-3}, idx...)
	} else {
		header, idx, err = t.setHeader(name, lineNo, fields, starts)
	}
	if err != nil {
		return nil, err
	}
	p := &rowParser{name: name, header: header, delim: delim, maxLine: lim.MaxLineBytes, dest: make([]int, len(idx)), index: -1}
	for k, d := range idx {
		switch d {
		case -1:
			p.dest[k] = 0
		case -2:
			p.dest[k] = 1
		case -3:
			p.index = 2 + len(t.Names)
			p.dest[k] = p.index
		default:
			p.dest[k] = 2 + d
		}
	}
	return p, nil
}

// numericRow reports whether every field of line is a number (quoted or
// not) and the fields do not name both edge columns lo and hi (which a
// caller may name "0" and "1"): such a line is data, not a header.
func numericRow(line []byte, delim byte, lo, hi string) bool {
	if delim == 0 {
		delim = ','
		if bytes.IndexByte(line, '\t') >= 0 && bytes.IndexByte(line, ',') < 0 {
			delim = '\t'
		}
	}
	fields, _, err := splitQuoted("", 0, line, delim)
	if err != nil {
		return false
	}
	named := 0
	for _, f := range fields {
		if _, msg := parseNumber(f); msg != "" {
			return false
		}
		if string(f) == lo || string(f) == hi {
			named++
		}
	}
	return named < 2
}

// commentHeader takes the column names from the commented first line of
// the file when the first other line is numbers, as numpy's savetxt
// writes "# lo,hi,rate,stat": the comment must name the bin-edge columns
// and have as many fields as that line. Otherwise the line of numbers is
// refused as a header, with a hint.
func (t *Table) commentHeader(name string, lineNo int, row, comment []byte, opt CSVOptions, lim Limits) (*rowParser, error) {
	nrow := 1 + bytes.Count(row, []byte{','})
	if opt.Delim != 0 {
		nrow = 1 + bytes.Count(row, []byte{opt.Delim})
	}
	if comment != nil {
		text := bytes.TrimLeft(comment, " \t")
		off := len(comment) - len(text) + 1 // column of text on line 1, minus one
		delim := opt.Delim
		if delim == 0 {
			delim = ','
			if bytes.IndexByte(text, '\t') >= 0 && bytes.IndexByte(text, ',') < 0 {
				delim = '\t'
			}
		}
		fields, starts, qerr := splitQuoted(name, 1, text, delim)
		names := make(map[string]bool, len(fields))
		for _, f := range fields {
			names[string(f)] = true
		}
		if qerr == nil && len(fields) == nrow && names[t.LoName] && names[t.HiName] {
			for k := range starts {
				starts[k] += off
			}
			p, err := t.rowParser(name, 1, fields, starts, delim, lim)
			if err != nil {
				return nil, err
			}
			t.Notes = append(t.Notes, fmt.Sprintf("%s: column names taken from the commented first line (numpy's savetxt writes its header so)", name))
			return p, nil
		}
	}
	e := Errorf(name, lineNo, 1, "expected a header of column names, found a row of numbers")
	if comment != nil {
		e.Hint = "the first line is a comment; numpy's savetxt writes its header so: pass comments='' to savetxt, or make the comment name the columns, including " + t.LoName + " and " + t.HiName + ", one for each field"
	} else {
		e.Hint = "put the column names on the first line, for example " + t.LoName + "," + t.HiName + ",value,error"
	}
	return nil, e
}

// splitQuoted cuts a header line at delim, as SplitFields does, but takes
// a field that starts with a double quote as quoted (RFC 4180): it ends
// at the next lone quote, "" inside stands for one quote, and only blanks
// may follow before the delimiter. starts are the 0-based offsets of the
// fields' first bytes (the opening quote for a quoted field). A quote left
// open on the line is refused: a field spanning lines is no column name
// or number tandem reads.
func splitQuoted(name string, lineNo int, line []byte, delim byte) ([][]byte, []int, *Error) {
	var fields [][]byte
	var starts []int
	pos := 0
	for {
		start, stop, end := NextField(line, pos, delim)
		if start < len(line) && line[start] == '"' {
			var f []byte
			var err *Error
			f, end, err = quotedField(name, lineNo, line, start, delim)
			if err != nil {
				return nil, nil, err
			}
			fields = append(fields, f)
		} else {
			fields = append(fields, line[start:stop])
		}
		starts = append(starts, start)
		if end >= len(line) {
			return fields, starts, nil
		}
		pos = end + 1
	}
}

// quotedField reads the quoted field whose opening quote is at q: its text
// with doubled quotes made single and blanks trimmed, and the position
// end of the delimiter after it (len(line) for the last field).
func quotedField(name string, lineNo int, line []byte, q int, delim byte) (text []byte, end int, err *Error) {
	i := q + 1
	var buf []byte
	from := i
	for {
		j := bytes.IndexByte(line[i:], '"')
		if j < 0 {
			e := Errorf(name, lineNo, q+1, "quoted field is not closed on its line")
			e.Hint = "a quoted field may not span lines: tandem reads one row per line"
			return nil, 0, e
		}
		i += j
		if i+1 < len(line) && line[i+1] == '"' {
			buf = append(buf, line[from:i+1]...)
			i += 2
			from = i
			continue
		}
		break
	}
	if buf != nil {
		text = append(buf, line[from:i]...)
	} else {
		text = line[from:i]
	}
	text = bytes.Trim(text, " \t")
	end = i + 1
	for end < len(line) && (line[end] == ' ' || line[end] == '\t') && line[end] != delim {
		end++
	}
	if end < len(line) && line[end] != delim {
		return nil, 0, Errorf(name, lineNo, end+1, "text after the closing quote of a quoted field")
	}
	return text, end, nil
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
	name   string
	header []string
	dest   []int // field → destination: 0 lower edges, 1 upper edges, 2+k Cols[k], index
	delim  byte
	// index is the destination of an unnamed first column taken for a
	// row index (the last one), or -1.
	index   int
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
			if err := CheckText(p.name, rel, line); err != nil {
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
			var err *Error
			if v, end, err = p.slowField(line, rel, pos, k, plain); err != nil {
				return err
			}
			plain = false
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

// slowField parses the field at pos that the one-pass scan did not: a
// field with blanks, a quoted field, or a bad one. It checks the line's
// text first when it is still taken for plain ASCII.
func (p *rowParser) slowField(line []byte, rel, pos, k int, plain bool) (float64, int, *Error) {
	if plain {
		if err := CheckText(p.name, rel, line); err != nil {
			return 0, 0, err
		}
	}
	delim := p.delim
	start, stop, end := NextField(line, pos, delim)
	field := line[start:stop]
	if start < len(line) && line[start] == '"' {
		var err *Error
		if field, end, err = quotedField(p.name, rel, line, start, delim); err != nil {
			return 0, 0, err
		}
	}
	v, msg := parseNumber(field)
	if msg != "" {
		if n := countFields(line, delim); n != len(p.header) {
			return 0, 0, raggedErr(p.name, rel, line, delim, len(p.header))
		}
		col := p.header[k]
		if p.dest[k] == p.index {
			col = "(unnamed index)"
		}
		return 0, 0, Errorf(p.name, rel, start+1, "column %q: %s", col, msg)
	}
	return v, end, nil
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
		if msg := badName(h); msg != "" {
			return nil, nil, Errorf(name, lineNo, starts[k]+1, "column name %q %s", h, msg)
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

// badName says what makes h unfit for a column name, or "": tandem writes
// names unquoted in its canonical tables, so a name may not hold a comma,
// tab, double quote, line break or NUL, start with '#' (a comment) or
// start or end with a blank (trimmed when read). Other control characters
// read back as written; reports show them escaped.
func badName(h string) string {
	if i := strings.IndexAny(h, ",\"\t\n\r\x00"); i >= 0 {
		return fmt.Sprintf("holds %q; column names may not hold commas, double quotes, tabs, line breaks or NUL", h[i])
	}
	if h[0] == '#' {
		return "starts with '#', which marks a comment line"
	}
	if h[0] == ' ' || h[len(h)-1] == ' ' {
		return "starts or ends with a blank"
	}
	return ""
}

// CheckText refuses a line with a NUL byte or invalid UTF-8, pointing at
// the first bad byte. The event tables of compare/events use it too.
func CheckText(name string, lineNo int, line []byte) *Error {
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
	fields, starts, err := splitQuoted(name, lineNo, line, delim)
	if err != nil {
		return err
	}
	col := len(line) + 1
	if len(fields) > want {
		col = starts[want] + 1
	}
	return Errorf(name, lineNo, col, "row has %d fields, header has %d", len(fields), want)
}

// countFields counts the fields of line, quoted fields as one each; a
// line whose quotes do not close counts by its delimiters.
func countFields(line []byte, delim byte) int {
	if bytes.IndexByte(line, '"') < 0 {
		return 1 + bytes.Count(line, []byte{delim})
	}
	fields, _, err := splitQuoted("", 0, line, delim)
	if err != nil {
		return 1 + bytes.Count(line, []byte{delim})
	}
	return len(fields)
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
