package protocol

import (
	"bytes"
	"fmt"

	"github.com/BurntSushi/toml"
)

// Canonical encodes what the protocol says, not how its file is written,
// so that a digest of it locks the meaning of campaign.toml and nothing
// else. The file's bytes are decoded as a TOML document and encoded again
// by BurntSushi/toml with:
//
//   - every table's keys in byte order (the encoder sorts them), plain
//     keys before sub-tables;
//   - no comments, no blank lines but the encoder's own, LF line ends;
//   - every number as a float in its shortest form that parses back
//     exactly (strconv 'g', -1): the schema has no integer setting, so
//     1 and 1.0 mean the same;
//   - every string in basic quotes with the encoder's escapes;
//   - inline tables and dotted keys written as ordinary tables.
//
// Two files that differ only in comments, line ends (LF or CRLF),
// whitespace, key order, string quoting or table style have the same
// canonical form; a file that differs in any value, or in a key it sets
// (even to a default), does not. The form is itself a protocol file:
// [Parse] accepts it, and its canonical form is itself (FuzzCanonical
// holds this).
//
// A protocol not made by [Parse] has no file to encode: Canonical returns
// nil.
func (p *Protocol) Canonical() []byte {
	if p.raw == nil {
		return nil
	}
	var doc map[string]any
	// Parse has decoded these bytes already; they cannot fail now.
	if _, err := toml.Decode(string(p.raw), &doc); err != nil {
		panic("protocol: decoding a parsed protocol again: " + err.Error())
	}
	var buf bytes.Buffer
	enc := toml.NewEncoder(&buf)
	enc.Indent = ""
	if err := enc.Encode(floats(doc)); err != nil {
		panic(fmt.Sprintf("protocol: encoding the canonical form: %v", err))
	}
	return buf.Bytes()
}

// floats turns every integer of a decoded document into a float.
func floats(v any) any {
	switch x := v.(type) {
	case map[string]any:
		for k, e := range x {
			x[k] = floats(e)
		}
	case []map[string]any:
		for i := range x {
			floats(x[i])
		}
	case []any:
		for i := range x {
			x[i] = floats(x[i])
		}
	case int64:
		return float64(x)
	}
	return v
}
