package table

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strings"
)

// Besides its own layout, [ParseJSON] reads the layouts of pandas'
// DataFrame.to_json that hold a table row by row or column by column:
//
//	orient="split":   {"columns": ["lo", …], "index": [0, …], "data": [[0, 1, …], …]}
//	orient="records": [{"lo": 0, "hi": 1, …}, …]
//	orient="columns": {"lo": {"0": 0, "1": 1, …}, "hi": {…}, …}   (the default)
//	orient="index":   {"0": {"lo": 0, "hi": 1, …}, "1": {…}, …}
//
// The column order is the order of the keys in the file. The index labels
// are not data and are left out. pandas writes NaN as null, which is
// refused as any missing number is. pandas rounds numbers to 10 decimal
// places unless to_json is given double_precision (at most 15), so every
// table read from these layouts carries a note saying so.

// pandasNote is the note of every table read from a pandas layout.
const pandasNote = "%s: read as pandas' to_json(orient=%q), which keeps 10 decimal places (15 at most, with double_precision=15), so small numbers lose digits; to_csv keeps every digit"

// member is one key of a JSON object, in file order, with its value and
// the value's offset in the whole input.
type member struct {
	key string
	raw json.RawMessage
	off int64
}

// jsonError turns a decoding error at base (the offset of the decoded
// text in data) into a positioned error.
func jsonError(name string, data []byte, base int64, err error) *Error {
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	var ne *numError
	line, col := 0, 0
	switch {
	case errors.As(err, &ne):
		if j := bytes.Index(data[base:], ne.raw); j >= 0 {
			line, col = position(data, base+int64(j))
		}
		return Errorf(name, line, col, "%s", ne.msg)
	case errors.As(err, &se):
		line, col = position(data, base+se.Offset)
	case errors.As(err, &te):
		line, col = position(data, base+te.Offset)
	case errors.Is(err, io.ErrUnexpectedEOF), errors.Is(err, io.EOF):
		line, col = position(data, int64(len(data)))
		return Errorf(name, line, col, "unexpected end of JSON input")
	}
	return Errorf(name, line, col, "%s", strings.TrimPrefix(err.Error(), "json: "))
}

// valueStart skips blanks and a colon from off, to the first byte of a
// value.
func valueStart(data []byte, off int64) int64 {
	for off < int64(len(data)) {
		switch data[off] {
		case ' ', '\t', '\r', '\n', ':', ',':
			off++
		default:
			return off
		}
	}
	return off
}

// objectMembers reads the object at data[base:base+len(raw)] = raw, keeping
// the order of its keys; a key given twice is refused.
func objectMembers(name string, data []byte, raw []byte, base int64) ([]member, *Error) {
	dec := json.NewDecoder(bytes.NewReader(raw))
	tok, err := dec.Token()
	if err != nil {
		return nil, jsonError(name, data, base, err)
	}
	if d, ok := tok.(json.Delim); !ok || d != '{' {
		line, col := position(data, base)
		return nil, Errorf(name, line, col, "expected an object")
	}
	var out []member
	seen := map[string]bool{}
	for dec.More() {
		at := dec.InputOffset()
		tok, err := dec.Token()
		if err != nil {
			return nil, jsonError(name, data, base, err)
		}
		key, _ := tok.(string)
		if seen[key] {
			line, col := position(data, valueStart(data, base+at))
			return nil, Errorf(name, line, col, "key %q given twice", key)
		}
		seen[key] = true
		var v json.RawMessage
		off := valueStart(data, base+dec.InputOffset())
		if err := dec.Decode(&v); err != nil {
			return nil, jsonError(name, data, base, err)
		}
		out = append(out, member{key, v, off})
	}
	if _, err := dec.Token(); err != nil {
		return nil, jsonError(name, data, base, err)
	}
	return out, nil
}

// number reads one strict number of a pandas layout at off.
func number(name string, data []byte, raw json.RawMessage, off int64) (strictNum, *Error) {
	var n strictNum
	if err := n.UnmarshalJSON(bytes.TrimSpace(raw)); err != nil {
		line, col := position(data, off)
		msg := err.Error()
		if bytes.Equal(bytes.TrimSpace(raw), []byte("null")) {
			msg = "null where a number should be (pandas writes NaN as null)"
		}
		return 0, Errorf(name, line, col, "%s", msg)
	}
	return n, nil
}

// pandasLayout names the pandas layout of data, or "" for tandem's own
// (or for text that is no JSON object or array, whose errors tandem's own
// reader reports).
func pandasLayout(name string, data []byte, lo string) string {
	text := bytes.TrimLeft(data, " \t\r\n")
	if len(text) == 0 {
		return ""
	}
	if text[0] == '[' {
		return "records"
	}
	if text[0] != '{' {
		return ""
	}
	ms, err := objectMembers(name, data, text, int64(len(data)-len(text)))
	if err != nil || len(ms) == 0 {
		return ""
	}
	objects := true
	keys := map[string]bool{}
	for _, m := range ms {
		keys[m.key] = true
		objects = objects && len(m.raw) > 0 && m.raw[0] == '{'
	}
	switch {
	case keys["rows"] || keys["format"]:
		return ""
	case keys["data"]:
		return "split"
	case objects && keys[lo]:
		return "columns"
	case objects:
		return "index"
	}
	return ""
}

// parsePandas reads data in the named pandas layout.
func parsePandas(name string, data []byte, layout string, opt CSVOptions) (*Table, error) {
	var s structured
	var lines []int
	var err *Error
	switch layout {
	case "split":
		err = s.split(name, data, &lines)
	case "records":
		err = s.records(name, data, &lines)
	case "columns", "index":
		err = s.byKey(name, data, layout == "columns", &lines)
	}
	if err != nil {
		return nil, err
	}
	t, terr := s.table(name, opt, func(r int) int {
		if r < len(lines) {
			return lines[r]
		}
		return 0
	})
	if terr != nil {
		return nil, terr
	}
	t.Notes = append(t.Notes, fmt.Sprintf(pandasNote, name, layout))
	return t, nil
}

// split reads orient="split": columns, an optional index, and data.
func (s *structured) split(name string, data []byte, lines *[]int) *Error {
	text := bytes.TrimLeft(data, " \t\r\n")
	ms, err := objectMembers(name, data, text, int64(len(data)-len(text)))
	if err != nil {
		return err
	}
	var rows []member
	for _, m := range ms {
		switch m.key {
		case "columns":
			if err := json.Unmarshal(m.raw, &s.Columns); err != nil {
				return jsonError(name, data, m.off, err)
			}
		case "index":
			// row labels: not data
		case "data":
			if rows, err = arrayMembers(name, data, m.raw, m.off); err != nil {
				return err
			}
		default:
			line, col := position(data, m.off)
			return Errorf(name, line, col, "unknown key %q in a pandas split table (want columns, index and data)", m.key)
		}
	}
	if s.Columns == nil {
		return Errorf(name, 0, 0, "a pandas split table needs \"columns\"")
	}
	for _, r := range rows {
		cells, err := arrayMembers(name, data, r.raw, r.off)
		if err != nil {
			return err
		}
		row := make([]strictNum, len(cells))
		for k, c := range cells {
			if row[k], err = number(name, data, c.raw, c.off); err != nil {
				return err
			}
		}
		s.Rows = append(s.Rows, row)
		l, _ := position(data, r.off)
		*lines = append(*lines, l)
	}
	return nil
}

// arrayMembers reads the array raw at base into its elements.
func arrayMembers(name string, data []byte, raw []byte, base int64) ([]member, *Error) {
	dec := json.NewDecoder(bytes.NewReader(raw))
	tok, err := dec.Token()
	if err != nil {
		return nil, jsonError(name, data, base, err)
	}
	if d, ok := tok.(json.Delim); !ok || d != '[' {
		line, col := position(data, base)
		return nil, Errorf(name, line, col, "expected an array")
	}
	var out []member
	for dec.More() {
		off := valueStart(data, base+dec.InputOffset())
		var v json.RawMessage
		if err := dec.Decode(&v); err != nil {
			return nil, jsonError(name, data, base, err)
		}
		out = append(out, member{raw: v, off: off})
	}
	if _, err := dec.Token(); err != nil {
		return nil, jsonError(name, data, base, err)
	}
	return out, nil
}

// records reads orient="records": an array of objects with the same keys;
// the first object's key order is the column order.
func (s *structured) records(name string, data []byte, lines *[]int) *Error {
	text := bytes.TrimLeft(data, " \t\r\n")
	base := int64(len(data) - len(text))
	dec := json.NewDecoder(bytes.NewReader(text))
	var whole json.RawMessage
	if err := dec.Decode(&whole); err != nil {
		return jsonError(name, data, base, err)
	}
	if dec.More() {
		return Errorf(name, 0, 0, "extra data after the table")
	}
	recs, err := arrayMembers(name, data, whole, base)
	if err != nil {
		return err
	}
	col := map[string]int{}
	for r, rec := range recs {
		ms, err := objectMembers(name, data, rec.raw, rec.off)
		if err != nil {
			return err
		}
		line, c := position(data, rec.off)
		if r == 0 {
			for k, m := range ms {
				s.Columns = append(s.Columns, m.key)
				col[m.key] = k
			}
		}
		if len(ms) != len(s.Columns) {
			return Errorf(name, line, c, "record %d has %d keys, the first has %d", r+1, len(ms), len(s.Columns))
		}
		row := make([]strictNum, len(s.Columns))
		for _, m := range ms {
			k, ok := col[m.key]
			if !ok {
				l, c := position(data, m.off)
				return Errorf(name, l, c, "record %d has the key %q, which the first record lacks", r+1, m.key)
			}
			if row[k], err = number(name, data, m.raw, m.off); err != nil {
				return err
			}
		}
		s.Rows = append(s.Rows, row)
		*lines = append(*lines, line)
	}
	return nil
}

// byKey reads orient="columns" (column → label → number, byColumn) or
// orient="index" (label → column → number). The rows follow the labels'
// order in the first entry; every entry must have the same labels.
func (s *structured) byKey(name string, data []byte, byColumn bool, lines *[]int) *Error {
	text := bytes.TrimLeft(data, " \t\r\n")
	outer, err := objectMembers(name, data, text, int64(len(data)-len(text)))
	if err != nil {
		return err
	}
	var inner [][]member
	for _, o := range outer {
		ms, err := objectMembers(name, data, o.raw, o.off)
		if err != nil {
			return err
		}
		if len(inner) > 0 && len(ms) != len(inner[0]) {
			line, col := position(data, o.off)
			return Errorf(name, line, col, "%q has %d entries, %q has %d", o.key, len(ms), outer[0].key, len(inner[0]))
		}
		inner = append(inner, ms)
	}
	if len(inner) == 0 {
		return Errorf(name, 0, 0, "empty table")
	}
	keys := make([]string, len(inner[0]))
	at := make(map[string]int, len(keys))
	for k, m := range inner[0] {
		keys[k] = m.key
		at[m.key] = k
	}
	// cell[i][k]: the number of outer entry i at inner key k.
	cells := make([][]strictNum, len(outer))
	for i, ms := range inner {
		cells[i] = make([]strictNum, len(keys))
		for _, m := range ms {
			k, ok := at[m.key]
			if !ok {
				line, col := position(data, m.off)
				return Errorf(name, line, col, "%q has the key %q, which %q lacks", outer[i].key, m.key, outer[0].key)
			}
			if cells[i][k], err = number(name, data, m.raw, m.off); err != nil {
				return err
			}
		}
	}
	if byColumn {
		for _, o := range outer {
			s.Columns = append(s.Columns, o.key)
		}
		for k := range keys {
			row := make([]strictNum, len(outer))
			for i := range outer {
				row[i] = cells[i][k]
			}
			s.Rows = append(s.Rows, row)
			line, _ := position(data, inner[0][k].off)
			*lines = append(*lines, line)
		}
		return nil
	}
	s.Columns = keys
	for i, o := range outer {
		s.Rows = append(s.Rows, cells[i])
		line, _ := position(data, o.off)
		*lines = append(*lines, line)
	}
	return nil
}
