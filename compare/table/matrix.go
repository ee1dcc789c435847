package table

import (
	"bytes"
	"math"
	"unicode/utf8"
)

// ReadMatrixFile reads a square matrix from a CSV file: one row per line,
// comma- (or tab-) separated numbers, no header; '#' comment lines and blank
// lines are ignored. It must be n×n, and with symmetric (a covariance of
// one chain) also symmetric within a relative 1e-9; see [ParseMatrix].
func ReadMatrixFile(path string, n int, symmetric bool) ([][]float64, error) {
	return ReadMatrixFileLimits(path, n, symmetric, Limits{})
}

// ReadMatrixFileLimits is [ReadMatrixFile] within the given limits on the
// file size and line length (zero fields are the defaults).
func ReadMatrixFileLimits(path string, n int, symmetric bool, lim Limits) ([][]float64, error) {
	data, err := ReadFileBounded(path, lim)
	if err != nil {
		return nil, err
	}
	return parseMatrix(path, data, n, symmetric, lim.resolved())
}

// ParseMatrix parses an n×n matrix; symmetric requires M = Mᵀ (covariance
// matrices of one chain), otherwise any square matrix is accepted
// (cross-covariances). n <= 0 accepts any size.
func ParseMatrix(name string, data []byte, n int, symmetric bool) ([][]float64, error) {
	return parseMatrix(name, data, n, symmetric, DefaultLimits)
}

func parseMatrix(name string, data []byte, n int, symmetric bool, lim Limits) ([][]float64, error) {
	if int64(len(data)) > lim.MaxBytes {
		return nil, tooLarge(name, lim)
	}
	if i := bytes.IndexByte(data, 0); i >= 0 {
		return nil, Errorf(name, 1+bytes.Count(data[:i], []byte{'\n'}), 0, "binary data (NUL byte); expected a CSV matrix")
	}
	var (
		rows    [][]float64
		lineNo  int
		fields  [][]byte
		starts  []int
		lastRow int
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
		if len(line) > lim.MaxLineBytes {
			return nil, lineTooLong(name, lineNo, nil, lim)
		}
		if !utf8.Valid(line) {
			return nil, Errorf(name, lineNo, 0, "invalid UTF-8; expected a text matrix")
		}
		t := bytes.TrimLeft(line, " \t")
		if len(t) == 0 || t[0] == '#' {
			continue
		}
		delim := byte(',')
		if bytes.IndexByte(line, ',') < 0 && bytes.IndexByte(line, '\t') >= 0 {
			delim = '\t'
		}
		fields, starts = SplitFields(line, delim, fields[:0], starts[:0])
		want := n
		if want <= 0 && len(rows) > 0 {
			want = len(rows[0])
		}
		if want > 0 && len(fields) != want {
			return nil, Errorf(name, lineNo, 0, "row has %d entries, want %d (one per bin)", len(fields), want)
		}
		row := make([]float64, len(fields))
		for k, f := range fields {
			v, msg := parseNumber(f)
			if msg != "" {
				return nil, Errorf(name, lineNo, starts[k]+1, "%s", msg)
			}
			row[k] = v
		}
		rows = append(rows, row)
		lastRow = lineNo
	}
	if len(rows) == 0 {
		return nil, Errorf(name, 0, 0, "empty matrix")
	}
	size := len(rows[0])
	if n > 0 {
		size = n
	}
	if len(rows) != size {
		return nil, Errorf(name, lastRow, 0, "matrix has %d rows, want %d (one per bin)", len(rows), size)
	}
	if symmetric {
		for i := range rows {
			for j := 0; j < i; j++ {
				a, b := rows[i][j], rows[j][i]
				if math.Abs(a-b) > 1e-9*math.Max(math.Abs(a), math.Abs(b)) {
					return nil, Errorf(name, 0, 0, "matrix is not symmetric: entry (%d,%d) = %s but (%d,%d) = %s", i+1, j+1, Format(a), j+1, i+1, Format(b))
				}
			}
			if rows[i][i] < 0 {
				return nil, Errorf(name, 0, 0, "negative variance on the diagonal at (%d,%d)", i+1, i+1)
			}
		}
	}
	return rows, nil
}
