package format

import (
	"bytes"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"fmt"
	"strconv"
	"strings"

	"tandem/blind"
	"tandem/compare/table"
)

// TableKind is the role of a table file: what its first line says.
type TableKind string

const (
	Sealed    TableKind = "sealed"
	Blinded   TableKind = "blinded"
	Unblinded TableKind = "unblinded"
)

// Map scopes written in a blinded table's "# map:" line.
const (
	MapCommon = "common"
	MapTeam   = "team"
)

// TableFile is a table with the header lines tandem writes above it:
//
//	# tandem/v2 KIND table
//	# campaign: ID
//	# team: T
//	# observable: O
//	# version: N                 (the seal version, decimal from 1)
//	# nonce: BASE64              (sealed and unblinded: 32 random bytes, standard base64 without padding)
//	# map: common|team           (blinded only: the scope of the map)
//	# sealed: COMMITMENT         (blinded only: the seal it came from)
//	lo,hi,...                    (the canonical CSV of the table)
//
// The canonical CSV is the header line (the edge column names, then every
// declared value column followed by its error columns, in protocol order,
// comma-separated), then one line per bin with every number written as the
// package doc says. The '#' lines make the file a valid CSV for `tandem
// compare` and for any CSV reader that skips comments.
type TableFile struct {
	Kind       TableKind
	Campaign   string
	Team       string
	Observable string
	Version    int
	Nonce      []byte
	Map        string
	SealedFrom string
	Table      *table.Table
}

// Encode writes the file in its one canonical form.
func (f *TableFile) Encode() []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "# %s %s table\n# campaign: %s\n# team: %s\n# observable: %s\n# version: %d\n", blind.Version, f.Kind, f.Campaign, f.Team, f.Observable, f.Version)
	if f.Kind != Blinded {
		fmt.Fprintf(&b, "# nonce: %s\n", base64.RawStdEncoding.EncodeToString(f.Nonce))
	} else {
		fmt.Fprintf(&b, "# map: %s\n# sealed: %s\n", f.Map, f.SealedFrom)
	}
	b.Write(AppendCSV(nil, f.Table))
	return b.Bytes()
}

// AppendCSV appends the canonical CSV of t: the header line, then one line
// per bin, every number as [table.Format] writes it.
func AppendCSV(b []byte, t *table.Table) []byte {
	b = append(b, t.LoName...)
	b = append(b, ',')
	b = append(b, t.HiName...)
	for _, n := range t.Names {
		b = append(b, ',')
		b = append(b, n...)
	}
	b = append(b, '\n')
	num := func(v float64) {
		if v == 0 {
			b = append(b, '0')
		} else {
			b = strconv.AppendFloat(b, v, 'g', -1, 64)
		}
	}
	for i := range t.Lo {
		num(t.Lo[i])
		b = append(b, ',')
		num(t.Hi[i])
		for _, c := range t.Cols {
			b = append(b, ',')
			num(c[i])
		}
		b = append(b, '\n')
	}
	return b
}

// DecodeTableFile parses a table file of the given kind whose edge columns
// are lo and hi, checking its header lines and that it is canonical.
func DecodeTableFile(name string, data []byte, kind TableKind, lo, hi string) (*TableFile, error) {
	f := &TableFile{Kind: kind}
	keys := []string{"campaign", "team", "observable", "version"}
	if kind == Blinded {
		keys = append(keys, "map", "sealed")
	} else {
		keys = append(keys, "nonce")
	}
	lines := strings.SplitAfterN(string(data), "\n", len(keys)+2)
	if len(lines) < len(keys)+2 {
		return nil, table.Errorf(name, len(lines), 0, "not a %s %s table: too short", blind.Version, kind)
	}
	if lines[0] != "# "+blind.Version+" "+string(kind)+" table\n" {
		if strings.HasPrefix(lines[0], "# tandem/v1 ") {
			return nil, table.Errorf(name, 1, 1, "a tandem/v1 table: this version of tandem reads %s campaigns only", blind.Version)
		}
		return nil, table.Errorf(name, 1, 1, "not a %s %s table", blind.Version, kind)
	}
	vals := map[string]string{}
	for i, k := range keys {
		v, ok := strings.CutPrefix(lines[i+1], "# "+k+": ")
		if !ok || !strings.HasSuffix(v, "\n") {
			return nil, table.Errorf(name, i+2, 1, "expected \"# %s: \"", k)
		}
		vals[k] = strings.TrimSuffix(v, "\n")
	}
	f.Campaign, f.Team, f.Observable = vals["campaign"], vals["team"], vals["observable"]
	for i, k := range keys[:3] {
		if !ValidName(vals[k]) {
			return nil, table.Errorf(name, i+2, len(k)+5, "%s %q is not a name (1-64 letters, digits, '_', '.' or '-', starting with a letter or digit)", k, vals[k])
		}
	}
	n, ok := parseCount(vals["version"])
	if !ok {
		return nil, table.Errorf(name, 5, 12, "version %q is not 1 to 999999999 without leading zeros", vals["version"])
	}
	f.Version = n
	if kind == Blinded {
		f.Map, f.SealedFrom = vals["map"], vals["sealed"]
		if f.Map != MapCommon && f.Map != MapTeam {
			return nil, table.Errorf(name, 6, 8, "map must be %q or %q", MapCommon, MapTeam)
		}
		if !validHex64(f.SealedFrom) {
			return nil, table.Errorf(name, 7, 11, "the seal commitment %q is not 64 lowercase hex digits", f.SealedFrom)
		}
	} else {
		nonce, err := base64.RawStdEncoding.Strict().DecodeString(vals["nonce"])
		if err != nil || len(nonce) != 32 {
			return nil, table.Errorf(name, 6, 10, "malformed nonce")
		}
		f.Nonce = nonce
	}
	t, err := decodeCSV(name, lines[len(keys)+1], len(keys)+2, lo, hi)
	if err != nil {
		return nil, err
	}
	f.Table = t
	if !bytes.Equal(f.Encode(), data) {
		return nil, table.Errorf(name, 0, 0, "%s table is not in canonical form (edited?)", kind)
	}
	return f, nil
}

// Commitment is the seal-time commitment to a table:
//
//	SHA-256("tandem/v2 seal-commitment" 0x00 campaign 0x00 team 0x00 observable 0x00 version 0x00 nonce canonical-CSV)
//
// with version in decimal ASCII and nonce the 32 raw bytes. The nonce hides
// the table; the names and the version bind it to its place.
func (f *TableFile) Commitment() string {
	h := sha256.New()
	fmt.Fprintf(h, "%s seal-commitment\x00%s\x00%s\x00%s\x00%d\x00", blind.Version, f.Campaign, f.Team, f.Observable, f.Version)
	h.Write(f.Nonce)
	h.Write(AppendCSV(nil, f.Table))
	return hex.EncodeToString(h.Sum(nil))
}

// NewNonce draws a 32-byte nonce from the OS random source.
func NewNonce() ([]byte, error) {
	n := make([]byte, 32)
	if _, err := rand.Read(n); err != nil {
		return nil, fmt.Errorf("reading the OS random source: %w", err)
	}
	return n, nil
}

// Digest is the lowercase hex SHA-256 of data.
func Digest(data []byte) string {
	h := sha256.Sum256(data)
	return hex.EncodeToString(h[:])
}

// decodeCSV reads the canonical CSV of a table file, starting at line
// first: the header (lo, hi, then the other column names), then one row per
// bin of canonical numbers (see the package doc), comma-separated, each
// line ending in LF. Anything else is refused with its line and column.
func decodeCSV(name, text string, first int, lo, hi string) (*table.Table, error) {
	header, rest, ok := strings.Cut(text, "\n")
	if !ok {
		return nil, table.Errorf(name, first, 0, "no table after the header lines")
	}
	names := strings.Split(header, ",")
	if len(names) < 3 || names[0] != lo || names[1] != hi {
		return nil, table.Errorf(name, first, 1, "header must start with %s,%s and name at least one column", lo, hi)
	}
	t := &table.Table{Source: name, LoName: lo, HiName: hi, Names: names[2:], Cols: make([][]float64, len(names)-2), FirstLine: first + 1}
	n := strings.Count(rest, "\n")
	if n == 0 || !strings.HasSuffix(rest, "\n") {
		return nil, table.Errorf(name, first+1, 0, "table has no bins, or its last line has no LF")
	}
	t.Lo, t.Hi = make([]float64, 0, n), make([]float64, 0, n)
	for j := range t.Cols {
		t.Cols[j] = make([]float64, 0, n)
	}
	for ln := first + 1; rest != ""; ln++ {
		var row string
		row, rest, _ = strings.Cut(rest, "\n")
		col := 1
		for j := 0; j < len(names); j++ {
			field, tail, more := strings.Cut(row, ",")
			if more != (j < len(names)-1) {
				return nil, table.Errorf(name, ln, col, "expected %d comma-separated numbers", len(names))
			}
			v, err := strconv.ParseFloat(field, 64)
			if err != nil || table.Format(v) != field {
				return nil, table.Errorf(name, ln, col, "%q is not a number in canonical form", field)
			}
			switch j {
			case 0:
				t.Lo = append(t.Lo, v)
			case 1:
				t.Hi = append(t.Hi, v)
			default:
				t.Cols[j-2] = append(t.Cols[j-2], v)
			}
			col += len(field) + 1
			row = tail
		}
	}
	if err := t.Validate(); err != nil {
		return nil, err
	}
	return t, nil
}
