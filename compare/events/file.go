package events

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"

	"tandem/compare/table"
)

// Value is a per-event value in a summary file: a JSON number, or the
// strings "NaN", "+Inf" and "-Inf", which JSON numbers cannot hold.
type Value float64

// MarshalJSON implements json.Marshaler.
func (v Value) MarshalJSON() ([]byte, error) {
	f := float64(v)
	switch {
	case math.IsNaN(f):
		return []byte(`"NaN"`), nil
	case math.IsInf(f, 1):
		return []byte(`"+Inf"`), nil
	case math.IsInf(f, -1):
		return []byte(`"-Inf"`), nil
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 64), nil
}

// UnmarshalJSON implements json.Unmarshaler.
func (v *Value) UnmarshalJSON(b []byte) error {
	switch string(b) {
	case `"NaN"`:
		*v = Value(math.NaN())
		return nil
	case `"+Inf"`:
		*v = Value(math.Inf(1))
		return nil
	case `"-Inf"`:
		*v = Value(math.Inf(-1))
		return nil
	}
	f, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		return fmt.Errorf("not a number: %.20s", b)
	}
	*v = Value(f)
	return nil
}

// WriteSummary writes s as one JSON object (see ReadSummary).
func WriteSummary(w io.Writer, s *Summary) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", " ")
	return enc.Encode(s)
}

// ReadSummary reads a summary file written by WriteSummary; name is used in
// messages. Unknown fields, a wrong format line and arrays whose sizes do
// not fit the summary's columns are refused.
func ReadSummary(name string, data []byte) (*Summary, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var s Summary
	if err := dec.Decode(&s); err != nil {
		line, col := lineCol(data, dec.InputOffset())
		if se, ok := err.(*json.SyntaxError); ok {
			line, col = lineCol(data, se.Offset)
		}
		return nil, table.Errorf(name, line, col, "not a summary file: %v", err)
	}
	if dec.More() {
		return nil, table.Errorf(name, 0, 0, "trailing data after the summary")
	}
	if err := sameShape(&s, &s); err != nil {
		return nil, table.Errorf(name, 0, 0, "%v", err)
	}
	if !(s.Alpha > 0 && s.Alpha < 1) || !(s.CL > 0 && s.CL < 1) {
		return nil, table.Errorf(name, 0, 0, "malformed summary: alpha %v and confidence level %v must both lie strictly between 0 and 1", s.Alpha, s.CL)
	}
	if err := s.checkCounts(); err != nil {
		return nil, table.Errorf(name, 0, 0, "malformed summary: %v", err)
	}
	s.maxWorst, s.maxSample = DefaultWorst, DefaultSample
	return &s, nil
}

// checkCounts refuses negative counts and totals that do not add up.
func (s *Summary) checkCounts() error {
	all := [][]int64{{s.RowsA, s.RowsB, s.Common, s.OnlyA, s.OnlyB, s.OutsideBins[0], s.OutsideBins[1]}, s.PassA, s.PassB, s.Pairs}
	for _, st := range s.Stats {
		all = append(all, []int64{st.Compared, st.Outside, st.NonFinite, st.Above, st.Below}, st.Hist)
	}
	for _, b := range s.Bins {
		all = append(all, []int64{b.NA, b.NB, b.NCommon})
	}
	for _, list := range all {
		for _, v := range list {
			if v < 0 {
				return fmt.Errorf("negative count")
			}
		}
	}
	if s.RowsA != s.Common+s.OnlyA || s.RowsB != s.Common+s.OnlyB {
		return fmt.Errorf("row counts do not add up")
	}
	var pa, pb, pairs int64
	for i := range s.PassA {
		pa += s.PassA[i]
		pb += s.PassB[i]
	}
	for _, v := range s.Pairs {
		pairs += v
	}
	if pa != s.RowsA || pb != s.RowsB || pairs != s.Common {
		return fmt.Errorf("cut-flow counts do not add up")
	}
	for _, st := range s.Stats {
		var h int64
		for _, v := range st.Hist {
			h += v
		}
		if h+st.NonFinite != st.Compared || st.Outside > st.Compared {
			return fmt.Errorf("histogram does not add up")
		}
	}
	return nil
}

func lineCol(data []byte, off int64) (int, int) {
	if off < 0 || off > int64(len(data)) {
		return 0, 0
	}
	before := data[:off]
	line := 1 + bytes.Count(before, []byte{'\n'})
	col := int(off) - bytes.LastIndexByte(before, '\n')
	return line, col
}
