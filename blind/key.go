package blind

import (
	"crypto/hkdf"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"math"
	"strconv"
	"strings"

	"tandem/compare/table"
)

// Key is a campaign's 256-bit blinding key K. It never appears in output,
// logs or error messages; its String method hides it.
type Key struct{ b [32]byte }

// GenerateKey draws a key from the operating system's random source.
func GenerateKey() (*Key, error) {
	var k Key
	if _, err := rand.Read(k.b[:]); err != nil {
		return nil, fmt.Errorf("reading the OS random source: %w", err)
	}
	return &k, nil
}

func (k *Key) String() string { return "blind.Key(hidden)" }

// GoString hides the key from %#v too.
func (k *Key) GoString() string { return k.String() }

// Commitment is the public commitment to K:
//
//	SHA-256("tandem/v1 key-commitment" || 0x00 || salt || K)
func (k *Key) Commitment(salt []byte) [32]byte {
	h := sha256.New()
	h.Write([]byte(FormatV1 + " key-commitment\x00"))
	h.Write(salt)
	h.Write(k.b[:])
	var out [32]byte
	h.Sum(out[:0])
	return out
}

// Matches reports, in constant time, whether k opens the commitment.
func (k *Key) Matches(salt []byte, commitment [32]byte) bool {
	c := k.Commitment(salt)
	return subtle.ConstantTimeCompare(c[:], commitment[:]) == 1
}

// keyFileHeader starts the plaintext of key.age and of key.revealed.
const keyFileHeader = FormatV1 + " campaign-key\n"

// marshal encodes the key for the sealed key file.
func (k *Key) marshal() []byte {
	return []byte(keyFileHeader + "key: " + hex.EncodeToString(k.b[:]) + "\n")
}

// parseKey decodes a key file's plaintext. Errors never include the content.
func parseKey(data []byte) (*Key, error) {
	s, ok := strings.CutPrefix(string(data), keyFileHeader)
	if !ok {
		return nil, fmt.Errorf("not a %s campaign key", FormatV1)
	}
	s, ok = strings.CutPrefix(s, "key: ")
	s, nl := strings.CutSuffix(s, "\n")
	if !ok || !nl || len(s) != 64 {
		return nil, fmt.Errorf("malformed campaign key")
	}
	var k Key
	if _, err := hex.Decode(k.b[:], []byte(s)); err != nil || hex.EncodeToString(k.b[:]) != s {
		return nil, fmt.Errorf("malformed campaign key") // lowercase hex only: one canonical form
	}
	return &k, nil
}

// uniform derives a number in [0, 1) from K and an info string with
// HKDF-SHA256 (RFC 5869): 8 bytes of output keying material, of which the
// top 53 bits become the fraction.
func (k *Key) uniform(info string) float64 {
	return float64(binary.BigEndian.Uint64(derive(k.b[:], info, 8))>>11) / (1 << 53)
}

// derive is HKDF-SHA256 with an empty salt (RFC 5869: a string of HashLen
// zeros), as every blinding parameter uses it.
func derive(ikm []byte, info string, n int) []byte {
	okm, err := hkdf.Key(sha256.New, ikm, nil, info, n)
	if err != nil {
		panic("blind: hkdf: " + err.Error()) // only for lengths > 255·32
	}
	return okm
}

// Info returns the HKDF info string for one blinding parameter:
//
//	"tandem/v1 blind" 0x00 observable 0x00 column 0x00 ("scale"|"shift") [0x00 bin]
//
// with bin the decimal 0-based bin index, present only for shape blinding.
func Info(observable, column, param string, bin int) string {
	s := FormatV1 + " blind\x00" + observable + "\x00" + column + "\x00" + param
	if bin >= 0 {
		s += "\x00" + strconv.Itoa(bin)
	}
	return s
}

// Map is the affine blinding map of one column: v' = S_i·v + O_i.
type Map struct {
	S, O []float64
}

// ColumnMap derives the blinding map of a column for n bins. With Shape,
// every bin has its own factor and offset; otherwise one pair serves all
// bins. An undeclared range means no scaling (s = 1) or no shift (o = 0).
func (k *Key) ColumnMap(observable string, c *Column, n int) Map {
	m := Map{S: make([]float64, n), O: make([]float64, n)}
	draw := func(r []float64, param string, bin int, def float64) float64 {
		if len(r) != 2 {
			return def
		}
		u := k.uniform(Info(observable, c.Name, param, bin))
		return r[0] + u*(r[1]-r[0])
	}
	for i := 0; i < n; i++ {
		bin := -1
		if c.Shape {
			bin = i
		} else if i > 0 {
			m.S[i], m.O[i] = m.S[0], m.O[0]
			continue
		}
		m.S[i] = draw(c.Scale, "scale", bin, 1)
		m.O[i] = draw(c.Shift, "shift", bin, 0)
	}
	return m
}

// Apply blinds a canonical table of the observable: every declared value
// column goes through its map and its uncertainty columns are scaled by
// |s|. The input is not modified.
func (k *Key) Apply(o *Observable, t *table.Table) *table.Table {
	out := &table.Table{Source: t.Source, LoName: t.LoName, HiName: t.HiName, Lo: t.Lo, Hi: t.Hi,
		Names: t.Names, Cols: make([][]float64, len(t.Cols))}
	copy(out.Cols, t.Cols)
	for ci := range o.Columns {
		c := &o.Columns[ci]
		m := k.ColumnMap(o.Name, c, t.Len())
		if v := t.Column(c.Name); v != nil {
			bv := make([]float64, len(v))
			for i := range v {
				bv[i] = m.S[i]*v[i] + m.O[i]
			}
			out.Cols[indexOf(t.Names, c.Name)] = bv
		}
		for _, e := range c.Errors {
			if ev := t.Column(e); ev != nil {
				be := make([]float64, len(ev))
				for i := range ev {
					be[i] = math.Abs(m.S[i]) * ev[i]
				}
				out.Cols[indexOf(t.Names, e)] = be
			}
		}
	}
	return out
}

func indexOf(names []string, n string) int {
	for i, x := range names {
		if x == n {
			return i
		}
	}
	return -1
}
