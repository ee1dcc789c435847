package blind

import (
	"bytes"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"fmt"
	"slices"
	"strings"

	"tandem/compare/table"
)

// TableKind is the role of a table file: what its header line says.
type TableKind string

const (
	Sealed    TableKind = "sealed"
	Blinded   TableKind = "blinded"
	Unblinded TableKind = "unblinded"
)

// TableFile is a table with the header lines tandem writes above it:
//
//	# tandem/v1 KIND table
//	# campaign: ID
//	# team: T
//	# observable: O
//	# nonce: BASE64          (sealed and unblinded only)
//	# sealed: COMMITMENT     (blinded only: the sealed table it came from)
//	lo,hi,...                (the canonical CSV of the table)
//
// The '#' lines make the file a valid CSV for `tandem compare` and for any
// CSV reader that skips comments.
type TableFile struct {
	Kind       TableKind
	Campaign   string
	Team       string
	Observable string
	Nonce      []byte
	SealedFrom string
	Table      *table.Table
}

// Encode writes the file in its one canonical form.
func (f *TableFile) Encode() []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "# %s %s table\n# campaign: %s\n# team: %s\n# observable: %s\n", FormatV1, f.Kind, f.Campaign, f.Team, f.Observable)
	if f.Kind != Blinded {
		fmt.Fprintf(&b, "# nonce: %s\n", base64.RawStdEncoding.EncodeToString(f.Nonce))
	} else {
		fmt.Fprintf(&b, "# sealed: %s\n", f.SealedFrom)
	}
	f.Table.WriteCSV(&b)
	return b.Bytes()
}

// DecodeTableFile parses a table file of the given kind, checking its
// header lines and that the table is in canonical form.
func DecodeTableFile(name string, data []byte, kind TableKind, o *Observable) (*TableFile, error) {
	f := &TableFile{Kind: kind}
	lines := strings.SplitAfterN(string(data), "\n", 7)
	want := []string{"# " + FormatV1 + " " + string(kind) + " table\n", "# campaign: ", "# team: ", "# observable: "}
	if kind == Blinded {
		want = append(want, "# sealed: ")
	} else {
		want = append(want, "# nonce: ")
	}
	if len(lines) < len(want)+1 {
		return nil, table.Errorf(name, len(lines), 0, "not a %s %s table: too short", FormatV1, kind)
	}
	vals := make([]string, len(want))
	for i, w := range want {
		if i == 0 {
			if lines[0] != w {
				return nil, table.Errorf(name, 1, 1, "not a %s %s table", FormatV1, kind)
			}
			continue
		}
		v, ok := strings.CutPrefix(lines[i], w)
		if !ok || !strings.HasSuffix(v, "\n") {
			return nil, table.Errorf(name, i+1, 1, "expected %q", strings.TrimSpace(w))
		}
		vals[i] = strings.TrimSuffix(v, "\n")
	}
	f.Campaign, f.Team, f.Observable = vals[1], vals[2], vals[3]
	if kind == Blinded {
		f.SealedFrom = vals[4]
	} else {
		nonce, err := base64.RawStdEncoding.Strict().DecodeString(vals[4])
		if err != nil || len(nonce) != 32 {
			return nil, table.Errorf(name, 5, 10, "malformed nonce")
		}
		f.Nonce = nonce
	}
	t, err := table.ParseCSV(name, data, table.CSVOptions{Lo: o.Edges[0], Hi: o.Edges[1], Delim: ','})
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
//	SHA-256("tandem/v1 seal-commitment" 0x00 campaign 0x00 team 0x00 observable 0x00 nonce canonical-CSV)
//
// The 32-byte random nonce hides the table; the names bind it to its place.
func (f *TableFile) Commitment() string {
	h := sha256.New()
	fmt.Fprintf(h, "%s seal-commitment\x00%s\x00%s\x00%s\x00", FormatV1, f.Campaign, f.Team, f.Observable)
	h.Write(f.Nonce)
	f.Table.WriteCSV(h)
	return hex.EncodeToString(h.Sum(nil))
}

func newNonce() ([]byte, error) {
	n := make([]byte, 32)
	if _, err := rand.Read(n); err != nil {
		return nil, fmt.Errorf("reading the OS random source: %w", err)
	}
	return n, nil
}

// Canonical checks a team's table against the observable's declaration and
// returns it with exactly the declared columns in declared order: the
// edges, then each value column followed by its uncertainty columns. A
// column the protocol does not declare is refused rather than dropped, so
// nothing unblinded can ride along.
func Canonical(o *Observable, t *table.Table) (*table.Table, error) {
	var names []string
	for _, c := range o.Columns {
		names = append(names, c.Name)
		names = append(names, c.Errors...)
	}
	for _, n := range t.Names {
		if !slices.Contains(names, n) {
			return nil, table.Errorf(t.Source, 0, 0, "column %q is not declared for observable %q (declared: %s)", n, o.Name, strings.Join(names, ", "))
		}
	}
	out := &table.Table{Source: t.Source, LoName: o.Edges[0], HiName: o.Edges[1], Lo: t.Lo, Hi: t.Hi, Lines: t.Lines, FirstLine: t.FirstLine}
	for _, n := range names {
		col := t.Column(n)
		if col == nil {
			return nil, table.Errorf(t.Source, 0, 0, "observable %q needs column %q (table has: %s)", o.Name, n, strings.Join(t.Names, ", "))
		}
		out.Names = append(out.Names, n)
		out.Cols = append(out.Cols, col)
	}
	if err := out.Validate(); err != nil {
		return nil, err
	}
	for _, c := range o.Columns {
		if _, err := out.Series(c.Selection()); err != nil {
			return nil, err
		}
	}
	return out, nil
}
