package table

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"regexp"
	"slices"
	"strings"

	"github.com/BurntSushi/toml"
)

// The JSON and TOML table layouts are tandem's own: a list of column names
// and a list of rows, each a list of numbers in column order.
//
//	{"format": "tandem/v1 table",
//	 "columns": ["lo", "hi", "rate", "stat"],
//	 "rows": [[0, 1, 5.0, 0.5], [1, 2, 6.0, 0.25]]}
//
//	format = "tandem/v1 table"
//	columns = ["lo", "hi", "rate", "stat"]
//	rows = [[0, 1, 5.0, 0.5], [1, 2, 6.0, 0.25]]
//
// "format" is optional; when present it must be "tandem/v1 table". Other
// keys are refused. The bin-edge columns are named by the caller as for CSV.

// StructuredFormat is the optional format value of JSON and TOML tables.
const StructuredFormat = "tandem/v1 table"

type structured struct {
	Format  string        `json:"format" toml:"format"`
	Columns []string      `json:"columns" toml:"columns"`
	Rows    [][]strictNum `json:"rows" toml:"rows"`
}

// strictNum is a JSON number read under the strict grammar of
// [parseNumber], which also refuses JSON strings and null in its place.
type strictNum float64

// numError is a refused number with its text, for locating it.
type numError struct {
	raw []byte
	msg string
}

func (e *numError) Error() string { return e.msg }

func (n *strictNum) UnmarshalJSON(b []byte) error {
	if len(b) > 0 && (b[0] == '"' || b[0] == 'n' || b[0] == 't' || b[0] == 'f') {
		return &numError{raw: slices.Clone(b), msg: "not a number: " + string(b)}
	}
	v, msg := parseNumber(b)
	if msg != "" {
		return &numError{raw: slices.Clone(b), msg: msg}
	}
	*n = strictNum(v)
	return nil
}

// UnmarshalTOML takes the value the TOML decoder parsed; the text of TOML
// numbers is checked separately by [checkTOMLNumbers].
func (n *strictNum) UnmarshalTOML(v any) error {
	switch x := v.(type) {
	case float64:
		*n = strictNum(x)
	case int64:
		*n = strictNum(x)
	default:
		return fmt.Errorf("not a number: %v", v)
	}
	return nil
}

// ReadJSONFile reads a table in tandem's JSON layout from a file of at most
// opt.Limits.MaxBytes.
func ReadJSONFile(path string, opt CSVOptions) (*Table, error) {
	data, err := ReadFileBounded(path, opt.Limits)
	if err != nil {
		return nil, err
	}
	return ParseJSON(path, data, opt)
}

// ReadTOMLFile reads a table in tandem's TOML layout from a file of at most
// opt.Limits.MaxBytes.
func ReadTOMLFile(path string, opt CSVOptions) (*Table, error) {
	data, err := ReadFileBounded(path, opt.Limits)
	if err != nil {
		return nil, err
	}
	return ParseTOML(path, data, opt)
}

// ReadJSON reads a JSON table from r (a pipe, say) under the same limits
// as [ReadJSONFile].
func ReadJSON(name string, r io.Reader, opt CSVOptions) (*Table, error) {
	data, err := readBounded(name, r, 0, opt.Limits.resolved(), "a text table")
	if err != nil {
		return nil, err
	}
	return ParseJSON(name, data, opt)
}

// ReadTOML reads a TOML table from r under the same limits as
// [ReadTOMLFile].
func ReadTOML(name string, r io.Reader, opt CSVOptions) (*Table, error) {
	data, err := readBounded(name, r, 0, opt.Limits.resolved(), "a text table")
	if err != nil {
		return nil, err
	}
	return ParseTOML(name, data, opt)
}

// ParseJSON reads a table in tandem's JSON layout, or in one of the
// layouts of pandas' to_json (see pandas.go).
func ParseJSON(name string, data []byte, opt CSVOptions) (*Table, error) {
	if lim := opt.Limits.resolved(); int64(len(data)) > lim.MaxBytes {
		return nil, tooLarge(name, lim)
	}
	if opt.Lo == "" {
		opt.Lo = DefaultLo
	}
	if layout := pandasLayout(name, data, opt.Lo); layout != "" {
		return parsePandas(name, data, layout, opt)
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var s structured
	if err := dec.Decode(&s); err != nil {
		line, col := 0, 0
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		var ne *numError
		switch {
		case errors.As(err, &ne):
			if i := bytes.Index(data, []byte("rows")); i >= 0 {
				if j := bytes.Index(data[i:], ne.raw); j >= 0 {
					line, col = position(data, int64(i+j))
				}
			}
			return nil, Errorf(name, line, col, "%s", ne.msg)
		case errors.As(err, &se):
			line, col = position(data, se.Offset)
		case errors.As(err, &te):
			line, col = position(data, te.Offset)
		case errors.Is(err, io.ErrUnexpectedEOF):
			line, col = position(data, int64(len(data)))
		case errors.Is(err, io.EOF):
			if len(data) == 0 && isStdin(name) {
				return nil, emptyInput(name)
			}
			return nil, Errorf(name, 0, 0, "empty table")
		}
		return nil, Errorf(name, line, col, "%s", strings.TrimPrefix(err.Error(), "json: "))
	}
	if dec.More() {
		return nil, Errorf(name, 0, 0, "extra data after the table object")
	}
	return s.table(name, opt, func(row int) int { return rowLine(data, row) })
}

// ParseTOML reads a table in tandem's TOML layout.
func ParseTOML(name string, data []byte, opt CSVOptions) (*Table, error) {
	if lim := opt.Limits.resolved(); int64(len(data)) > lim.MaxBytes {
		return nil, tooLarge(name, lim)
	}
	var s structured
	md, err := toml.NewDecoder(bytes.NewReader(data)).Decode(&s)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, Errorf(name, pe.Position.Line, pe.Position.Col, "%s", pe.Message)
		}
		return nil, Errorf(name, 0, 0, "%v", err)
	}
	if und := md.Undecoded(); len(und) > 0 {
		return nil, Errorf(name, 0, 0, "unknown key %q", und[0].String())
	}
	if err := checkTOMLNumbers(name, data); err != nil {
		return nil, err
	}
	return s.table(name, opt, func(row int) int { return rowLine(data, row) })
}

// tomlRowsKey finds the line that assigns the rows array.
var tomlRowsKey = regexp.MustCompile(`(?m)^[ \t]*("rows"|'rows'|rows)[ \t]*=`)

// checkTOMLNumbers applies the strict number grammar to the text of the
// rows array of a TOML table that has decoded: TOML itself allows
// hexadecimal, "1_000", inf and nan, and its decoder rounds 1e-999 to 0.
func checkTOMLNumbers(name string, data []byte) error {
	loc := tomlRowsKey.FindIndex(data)
	if loc == nil {
		return nil
	}
	depth := 0
	for i := loc[1]; i < len(data); {
		switch c := data[i]; c {
		case ' ', '\t', '\r', '\n', ',':
			i++
		case '[':
			depth++
			i++
		case ']':
			depth--
			i++
			if depth <= 0 {
				return nil
			}
		case '#':
			for i < len(data) && data[i] != '\n' {
				i++
			}
		default:
			j := i
			for j < len(data) && !bytes.ContainsRune([]byte(" \t\r\n,[]#"), rune(data[j])) {
				j++
			}
			if _, msg := parseNumber(data[i:j]); msg != "" {
				line, col := position(data, int64(i))
				return Errorf(name, line, col, "%s", msg)
			}
			i = j
		}
	}
	return nil
}

func (s *structured) table(name string, opt CSVOptions, line func(int) int) (*Table, error) {
	if s.Format != "" && s.Format != StructuredFormat {
		return nil, Errorf(name, 0, 0, "format is %q, want %q", s.Format, StructuredFormat)
	}
	if len(s.Columns) == 0 {
		return nil, Errorf(name, 0, 0, "empty table: no columns")
	}
	if len(s.Rows) == 0 {
		return nil, Errorf(name, 0, 0, "table has columns but no rows")
	}
	if opt.Lo == "" {
		opt.Lo = DefaultLo
	}
	if opt.Hi == "" {
		opt.Hi = DefaultHi
	}
	t := &Table{Source: name, LoName: opt.Lo, HiName: opt.Hi}
	fields := make([][]byte, len(s.Columns))
	starts := make([]int, len(s.Columns))
	for i, c := range s.Columns {
		fields[i] = []byte(c)
	}
	_, idx, err := t.setHeader(name, 0, fields, starts)
	if err != nil {
		err.(*Error).Col = 0
		return nil, err
	}
	if lim := opt.Limits.resolved(); len(s.Columns) > lim.MaxColumns {
		e := Errorf(name, 0, 0, "the table has %d columns, more than the limit of %d", len(s.Columns), lim.MaxColumns)
		e.Hint = "raise the limit with " + flagMaxColumns
		return nil, e
	}
	for r, row := range s.Rows {
		if len(row) != len(s.Columns) {
			return nil, Errorf(name, line(r), 0, "row %d has %d numbers, columns has %d", r+1, len(row), len(s.Columns))
		}
		for k, n := range row {
			v := float64(n)
			if !finite(v) {
				return nil, Errorf(name, line(r), 0, "row %d, column %q: NaN and infinities are not allowed", r+1, s.Columns[k])
			}
			t.put(idx[k], v)
		}
		t.Lines = append(t.Lines, int32(line(r)))
	}
	if err := t.takeY(opt); err != nil {
		return nil, err
	}
	if err := t.Validate(); err != nil {
		return nil, err
	}
	return t, nil
}

// position converts a byte offset to a 1-based line and column.
func position(data []byte, off int64) (int, int) {
	if off > int64(len(data)) {
		off = int64(len(data))
	}
	before := data[:off]
	line := 1 + bytes.Count(before, []byte{'\n'})
	col := int(off) - (bytes.LastIndexByte(before, '\n') + 1)
	return line, col + 1
}

// rowLine finds the line of row r in the "rows" list: the line of its
// opening bracket, counting brackets after the "rows" key. 0 if unknown.
func rowLine(data []byte, r int) int {
	i := bytes.Index(data, []byte("rows"))
	if i < 0 {
		return 0
	}
	depth, row := 0, -1
	for j := i; j < len(data); j++ {
		switch data[j] {
		case '[':
			depth++
			if depth == 2 {
				row++
				if row == r {
					l, _ := position(data, int64(j))
					return l
				}
			}
		case ']':
			depth--
			if depth <= 0 {
				return 0
			}
		}
	}
	return 0
}
