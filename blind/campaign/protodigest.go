package campaign

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"tandem/compare/table"
)

// ProtocolDigest is the digest of what a campaign.toml means, not of its
// bytes: comments, white space, line ends (LF or CRLF), quoting styles,
// the order of keys within a table and the way numbers are written do not
// change it. It is the SHA-256 of "tandem/v3 protocol" 0x00 followed by
// the canonical encoding of the decoded TOML document (SPEC.md §4):
//
//	table   = "{" *(string value) "}"   keys in byte order
//	array   = "[" *value "]"
//	string  = "s" decimal(byte length) ":" bytes   (CRLF inside folded to LF)
//	integer = "i" decimal ";"
//	float   = "f" number ";"   (the §2 number rule; "nan", "inf", "-inf")
//	boolean = "T" / "F"
//
// A date or time value has no canonical encoding and is refused (the
// protocol schema has none).
func ProtocolDigest(data []byte) (string, error) {
	var doc map[string]any
	if _, err := toml.Decode(string(data), &doc); err != nil {
		return "", err
	}
	b := []byte("tandem/v3 protocol\x00")
	b, err := canonValue(b, doc)
	if err != nil {
		return "", err
	}
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:]), nil
}

func canonString(b []byte, s string) []byte {
	s = strings.ReplaceAll(s, "\r\n", "\n")
	b = append(b, 's')
	b = strconv.AppendInt(b, int64(len(s)), 10)
	b = append(b, ':')
	return append(b, s...)
}

func canonValue(b []byte, v any) ([]byte, error) {
	var err error
	switch x := v.(type) {
	case map[string]any:
		keys := make([]string, 0, len(x))
		for k := range x {
			keys = append(keys, k)
		}
		slices.Sort(keys)
		b = append(b, '{')
		for _, k := range keys {
			b = canonString(b, k)
			if b, err = canonValue(b, x[k]); err != nil {
				return nil, err
			}
		}
		return append(b, '}'), nil
	case []map[string]any:
		b = append(b, '[')
		for _, e := range x {
			if b, err = canonValue(b, e); err != nil {
				return nil, err
			}
		}
		return append(b, ']'), nil
	case []any:
		b = append(b, '[')
		for _, e := range x {
			if b, err = canonValue(b, e); err != nil {
				return nil, err
			}
		}
		return append(b, ']'), nil
	case string:
		return canonString(b, x), nil
	case int64:
		b = append(b, 'i')
		b = strconv.AppendInt(b, x, 10)
		return append(b, ';'), nil
	case float64:
		b = append(b, 'f')
		switch {
		case math.IsNaN(x):
			b = append(b, "nan"...)
		case math.IsInf(x, 1):
			b = append(b, "inf"...)
		case math.IsInf(x, -1):
			b = append(b, "-inf"...)
		default:
			b = append(b, table.Format(x)...)
		}
		return append(b, ';'), nil
	case bool:
		if x {
			return append(b, 'T'), nil
		}
		return append(b, 'F'), nil
	}
	return nil, fmt.Errorf("a %T value has no canonical protocol encoding", v)
}
