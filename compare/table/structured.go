package table

import (
	"bytes"
	"encoding/json"
	"errors"
	"io"
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
	Format  string      `json:"format" toml:"format"`
	Columns []string    `json:"columns" toml:"columns"`
	Rows    [][]float64 `json:"rows" toml:"rows"`
}

// ParseJSON reads a table in tandem's JSON layout.
func ParseJSON(name string, data []byte, opt CSVOptions) (*Table, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var s structured
	if err := dec.Decode(&s); err != nil {
		line, col := 0, 0
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		switch {
		case errors.As(err, &se):
			line, col = position(data, se.Offset)
		case errors.As(err, &te):
			line, col = position(data, te.Offset)
		case errors.Is(err, io.ErrUnexpectedEOF):
			line, col = position(data, int64(len(data)))
		case errors.Is(err, io.EOF):
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
	return s.table(name, opt, func(row int) int { return rowLine(data, row) })
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
	for r, row := range s.Rows {
		if len(row) != len(s.Columns) {
			return nil, Errorf(name, line(r), 0, "row %d has %d numbers, columns has %d", r+1, len(row), len(s.Columns))
		}
		for k, v := range row {
			if !finite(v) {
				return nil, Errorf(name, line(r), 0, "row %d, column %q: NaN and infinities are not allowed", r+1, s.Columns[k])
			}
			t.put(idx[k], v)
		}
		t.Lines = append(t.Lines, int32(line(r)))
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
