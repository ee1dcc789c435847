package format

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"slices"
	"strconv"
	"unicode/utf8"

	"tandem/blind"
	"tandem/compare/table"
)

// LedgerHeader is the first line of every ledger.
const LedgerHeader = blind.Version + " ledger"

// Genesis is the "prev" of the first entry: 64 zeros.
var Genesis = hex.EncodeToString(make([]byte, 32))

// Entry is one line of the append-only, hash-chained ledger. Its
// canonical line is a JSON object with the members, in this order,
//
//	{"seq":N,"prev":"HEX","step":"STEP","time":"TIME","actor":"NAME","files":{…},"data":{…},"sig":"B64"}
//
// where N is a decimal integer without leading zeros counting from 1, prev
// is the SHA-256 (lowercase hex) of the previous line's bytes (without its
// LF) or [Genesis] for the first, time is RFC 3339 UTC to the second
// ("2026-12-01T09:30:00Z"), files maps campaign-relative paths to the hex
// SHA-256 of their content, data maps step-specific keys to strings, and
// sig is the standard base64 (with padding, no line breaks) of the binary
// SSHSIG signature by the actor's key, in namespace [LedgerNamespace],
// over the canonical line with the "sig" member left out. "files" and
// "data" are left out when empty; their members are sorted by key, byte
// by byte. No whitespace anywhere. Strings are written between '"' with
// exactly two escapes: '"' as \" and '\' as \\; every other character is
// written as its UTF-8 bytes, and no string holds a [Forbidden] character
// (C0 and C1 controls, DEL, U+2028, U+2029, bidirectional formatting).
type Entry struct {
	Seq   int
	Prev  string
	Step  string
	Time  string
	Actor string
	Files map[string]string
	Data  map[string]string
	Sig   string

	hash string
}

// LedgerNamespace is the SSHSIG namespace of ledger entry signatures.
const LedgerNamespace = "tandem-ledger"

// Hash returns the hex SHA-256 of the entry's line.
func (e *Entry) Hash() string { return e.hash }

// SetHash records the hash of the line an entry was written as.
func (e *Entry) SetHash(h string) { e.hash = h }

// appendString writes s as a canonical JSON string.
func appendString(b []byte, s string) []byte {
	b = append(b, '"')
	for i := 0; i < len(s); i++ {
		switch c := s[i]; c {
		case '"', '\\':
			b = append(b, '\\', c)
		default:
			b = append(b, c)
		}
	}
	return append(b, '"')
}

func appendMap(b []byte, name string, m map[string]string) []byte {
	if len(m) == 0 {
		return b
	}
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	b = append(b, `,"`+name+`":{`...)
	for i, k := range keys {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendString(b, k)
		b = append(b, ':')
		b = appendString(b, m[k])
	}
	return append(b, '}')
}

// SignedBytes is the canonical line without the "sig" member: what the
// actor signs.
func (e *Entry) SignedBytes() []byte { return e.encode(false) }

// Line is the canonical line, without the LF.
func (e *Entry) Line() []byte { return e.encode(true) }

func (e *Entry) encode(withSig bool) []byte {
	b := make([]byte, 0, 256)
	b = append(b, `{"seq":`...)
	b = strconv.AppendInt(b, int64(e.Seq), 10)
	b = append(b, `,"prev":`...)
	b = appendString(b, e.Prev)
	b = append(b, `,"step":`...)
	b = appendString(b, e.Step)
	b = append(b, `,"time":`...)
	b = appendString(b, e.Time)
	b = append(b, `,"actor":`...)
	b = appendString(b, e.Actor)
	b = appendMap(b, "files", e.Files)
	b = appendMap(b, "data", e.Data)
	if withSig && e.Sig != "" {
		b = append(b, `,"sig":`...)
		b = appendString(b, e.Sig)
	}
	return append(b, '}')
}

// HashLine is the hex SHA-256 of a line.
func HashLine(b []byte) string {
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}

// ParseLedger reads a ledger linearly and checks its structure: the
// header, that each line is the canonical form of an entry, that sequence
// numbers count up from 1 and that each entry names the hash of the one
// before. Signatures and the order of steps are checked by the campaign.
func ParseLedger(path string, data []byte) ([]Entry, error) {
	first, rest, _ := bytes.Cut(data, []byte("\n"))
	if string(first) != LedgerHeader {
		if bytes.HasPrefix(first, []byte("tandem/v1 ")) {
			return nil, table.Errorf(path, 1, 1, "a tandem/v1 ledger: this version of tandem reads %s campaigns only", blind.Version)
		}
		return nil, table.Errorf(path, 1, 1, "not a ledger: first line must be %q", LedgerHeader)
	}
	if len(data) == 0 || data[len(data)-1] != '\n' {
		return nil, table.Errorf(path, 1+bytes.Count(data, []byte("\n")), 0, "ledger does not end with a newline (torn write?)")
	}
	return ParseMore(path, nil, rest)
}

// ParseMore parses lines appended to a ledger whose earlier entries are
// known (the ledger is append-only, so a reader that has parsed a prefix
// only reads what was added). more holds whole LF-terminated lines.
func ParseMore(path string, entries []Entry, more []byte) ([]Entry, error) {
	if len(more) > 0 && more[len(more)-1] != '\n' {
		return nil, table.Errorf(path, len(entries)+2+bytes.Count(more, []byte("\n")), 0, "ledger does not end with a newline (torn write?)")
	}
	out := slices.Grow(entries, bytes.Count(more, []byte("\n")))
	prev := Genesis
	if len(out) > 0 {
		prev = out[len(out)-1].hash
	}
	for ln := len(out) + 2; len(more) > 0; ln++ {
		var line []byte
		line, more, _ = bytes.Cut(more, []byte("\n"))
		e, err := DecodeEntry(line)
		if err != nil {
			return nil, table.Errorf(path, ln, 0, "%v", err)
		}
		if e.Seq != len(out)+1 {
			return nil, table.Errorf(path, ln, 0, "entry has sequence %d, want %d", e.Seq, len(out)+1)
		}
		if e.Prev != prev {
			return nil, table.Errorf(path, ln, 0, "hash chain broken: entry %d names previous %.12s…, but entry %d hashes to %.12s…", e.Seq, e.Prev, e.Seq-1, prev)
		}
		prev = e.hash
		out = append(out, e)
	}
	return out, nil
}

// DecodeEntry parses one canonical ledger line (without its LF). The
// parser reads exactly the grammar of [Entry] and nothing else: members in
// the fixed order, strings with only the two escapes, map keys strictly
// increasing, valid UTF-8 and no [Forbidden] character in a string.
func DecodeEntry(line []byte) (Entry, error) {
	var e Entry
	p := &lineParser{b: line}
	p.lit(`{"seq":`)
	e.Seq = p.int()
	p.lit(`,"prev":`)
	e.Prev = p.str()
	p.lit(`,"step":`)
	e.Step = p.str()
	p.lit(`,"time":`)
	e.Time = p.str()
	p.lit(`,"actor":`)
	e.Actor = p.str()
	if p.try(`,"files":`) {
		e.Files = p.obj()
	}
	if p.try(`,"data":`) {
		e.Data = p.obj()
	}
	if p.try(`,"sig":`) {
		e.Sig = p.str()
	}
	p.lit(`}`)
	if p.err == nil && p.i != len(line) {
		p.fail("trailing data")
	}
	if p.err != nil {
		return e, fmt.Errorf("entry is not a canonical ledger line (edited by hand?): %v at byte %d", p.err, p.i+1)
	}
	if !utf8.Valid(line) {
		return e, fmt.Errorf("entry is not valid UTF-8")
	}
	if !validUTCTime(e.Time) {
		return e, fmt.Errorf("entry time %q is not a UTC time to the second (2026-12-01T09:30:00Z)", e.Time)
	}
	if !bytes.Equal(e.Line(), line) {
		return e, fmt.Errorf("entry is not in canonical form (edited by hand?)")
	}
	e.hash = HashLine(line)
	return e, nil
}

// lineParser reads the canonical ledger-line grammar; the first error
// sticks.
type lineParser struct {
	b   []byte
	i   int
	err error
}

func (p *lineParser) fail(msg string) {
	if p.err == nil {
		p.err = errors.New(msg)
	}
}

func (p *lineParser) lit(s string) {
	if !p.try(s) {
		p.fail("expected " + s)
	}
}

func (p *lineParser) try(s string) bool {
	if p.err == nil && bytes.HasPrefix(p.b[p.i:], []byte(s)) {
		p.i += len(s)
		return true
	}
	return false
}

func (p *lineParser) int() int {
	if p.err != nil {
		return 0
	}
	j := p.i
	for j < len(p.b) && p.b[j] >= '0' && p.b[j] <= '9' {
		j++
	}
	if j == p.i || (p.b[p.i] == '0' && j-p.i > 1) || j-p.i > 9 {
		p.fail("expected a decimal number without leading zeros")
		return 0
	}
	n, _ := strconv.Atoi(string(p.b[p.i:j]))
	p.i = j
	return n
}

func (p *lineParser) str() string {
	if p.err != nil {
		return ""
	}
	if p.i >= len(p.b) || p.b[p.i] != '"' {
		p.fail("expected a string")
		return ""
	}
	// The common case, printable ASCII without escapes, is one slice;
	// anything else takes the checking loop below from the start.
	for j := p.i + 1; j < len(p.b); j++ {
		c := p.b[j]
		if c == '"' {
			s := string(p.b[p.i+1 : j])
			p.i = j + 1
			return s
		}
		if c == '\\' || c < 0x20 || c >= 0x7f {
			break
		}
	}
	var out []byte
	for j := p.i + 1; j < len(p.b); j++ {
		switch c := p.b[j]; {
		case c == '"':
			p.i = j + 1
			return string(out)
		case c == '\\':
			if j+1 < len(p.b) && (p.b[j+1] == '"' || p.b[j+1] == '\\') {
				out = append(out, p.b[j+1])
				j++
				continue
			}
			p.i = j
			p.fail("only \\\" and \\\\ are allowed as escapes")
			return ""
		case c < 0x20 || c == 0x7f:
			p.i = j
			p.fail(fmt.Sprintf("the control character U+%04X in a string", c))
			return ""
		case c < 0x80:
			out = append(out, c)
		default:
			r, n := utf8.DecodeRune(p.b[j:])
			if r == utf8.RuneError && n == 1 {
				p.i = j
				p.fail("invalid UTF-8 in a string")
				return ""
			}
			if Forbidden(r) {
				p.i = j
				p.fail(fmt.Sprintf("the character U+%04X in a string (control, separator or bidirectional formatting characters never occur)", r))
				return ""
			}
			out = append(out, p.b[j:j+n]...)
			j += n - 1
		}
	}
	p.fail("unterminated string")
	return ""
}

func (p *lineParser) obj() map[string]string {
	p.lit("{")
	m := map[string]string{}
	prev := ""
	for first := true; p.err == nil; first = false {
		if !first && !p.try(",") {
			break
		}
		k := p.str()
		if !first && k <= prev {
			p.fail("object keys must be sorted and unique")
		}
		prev = k
		p.lit(":")
		m[k] = p.str()
	}
	p.lit("}")
	return m
}

// EntryHeader is the first line of every log entry file of a tandem/v3
// campaign (section 8 of SPEC.md).
const EntryHeader = "tandem/v3 entry"

// EncodeEntryFile is the canonical bytes of an entry's own file: the
// header line, then the entry's canonical line, each ending in LF.
func EncodeEntryFile(e *Entry) []byte {
	line := e.Line()
	b := make([]byte, 0, len(EntryHeader)+len(line)+2)
	b = append(append(b, EntryHeader...), '\n')
	return append(append(b, line...), '\n')
}

// DecodeEntryFile parses an entry file: exactly the header line and one
// canonical entry line, both LF-terminated, nothing else. The entry's
// hash is set from its line.
func DecodeEntryFile(path string, data []byte) (Entry, error) {
	first, rest, ok := bytes.Cut(data, []byte("\n"))
	if !ok || string(first) != EntryHeader {
		if bytes.HasPrefix(first, []byte("tandem/v2 ")) || bytes.HasPrefix(first, []byte("tandem/v1 ")) {
			return Entry{}, table.Errorf(path, 1, 1, "a %s file: this version of tandem reads tandem/v3 campaigns only", first[:9])
		}
		return Entry{}, table.Errorf(path, 1, 1, "not a log entry: first line must be %q", EntryHeader)
	}
	line, tail, ok := bytes.Cut(rest, []byte("\n"))
	if !ok {
		return Entry{}, table.Errorf(path, 2, len(rest)+1, "entry line does not end with a newline (torn write?)")
	}
	if len(tail) > 0 {
		return Entry{}, table.Errorf(path, 3, 1, "an entry file holds one entry line; found more")
	}
	e, err := DecodeEntry(line)
	if err != nil {
		return Entry{}, table.Errorf(path, 2, 0, "%v", err)
	}
	return e, nil
}
