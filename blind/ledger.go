package blind

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"tandem/blind/safefile"
	"tandem/compare/table"
)

// LedgerHeader is the first line of every ledger.
const LedgerHeader = FormatV1 + " ledger"

// genesis is the "previous hash" of the first entry.
var genesis = hex.EncodeToString(make([]byte, 32))

// Entry is one step in the append-only, hash-chained ledger. Each entry is
// one line of canonical JSON (the encoding/json form of this struct, map keys
// sorted); Prev is the SHA-256 of the previous entry's line.
type Entry struct {
	Seq   int               `json:"seq"`
	Prev  string            `json:"prev"`
	Step  string            `json:"step"`
	Time  string            `json:"time"`
	Actor string            `json:"actor"`
	Files map[string]string `json:"files,omitempty"`
	Data  map[string]string `json:"data,omitempty"`

	hash string
}

// Hash returns the hex SHA-256 of the entry's line.
func (e *Entry) Hash() string { return e.hash }

func (e *Entry) marshal() []byte {
	b, err := json.Marshal(e)
	if err != nil {
		panic("blind: marshal ledger entry: " + err.Error())
	}
	return b
}

func hashLine(b []byte) string {
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}

// ParseLedger reads a ledger and checks its structure: the header, that each
// line is canonical JSON of an entry, that sequence numbers count up from 1,
// and that each entry names the hash of the one before.
func ParseLedger(path string, data []byte) ([]Entry, error) {
	lines := bytes.Split(data, []byte("\n"))
	if len(lines) == 0 || string(lines[0]) != LedgerHeader {
		return nil, table.Errorf(path, 1, 1, "not a ledger: first line must be %q", LedgerHeader)
	}
	if len(data) == 0 || data[len(data)-1] != '\n' {
		return nil, table.Errorf(path, len(lines), 0, "ledger does not end with a newline (torn write?)")
	}
	lines = lines[1 : len(lines)-1]
	out := make([]Entry, 0, len(lines))
	prev := genesis
	for i, line := range lines {
		ln := i + 2
		var e Entry
		dec := json.NewDecoder(bytes.NewReader(line))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&e); err != nil {
			return nil, table.Errorf(path, ln, 0, "entry is not valid JSON: %v", err)
		}
		if !bytes.Equal(e.marshal(), line) {
			return nil, table.Errorf(path, ln, 0, "entry is not in canonical form (edited by hand?)")
		}
		if e.Seq != i+1 {
			return nil, table.Errorf(path, ln, 0, "entry has sequence %d, want %d", e.Seq, i+1)
		}
		if e.Prev != prev {
			return nil, table.Errorf(path, ln, 0, "hash chain broken: entry %d names previous %.12s…, but entry %d hashes to %.12s…", e.Seq, e.Prev, e.Seq-1, prev)
		}
		e.hash = hashLine(line)
		prev = e.hash
		out = append(out, e)
	}
	return out, nil
}

// appendEntry appends e to the ledger under the campaign lock, filling Seq,
// Prev and Time. The ledger file is rewritten atomically, so a crash leaves
// the old ledger or the new one.
func (c *Campaign) appendEntry(e Entry) error {
	path := filepath.Join(c.Dir, LedgerFile)
	data, err := os.ReadFile(path)
	if err != nil && !os.IsNotExist(err) {
		return err
	}
	var entries []Entry
	if len(data) > 0 {
		if entries, err = ParseLedger(path, data); err != nil {
			return err
		}
	} else {
		data = []byte(LedgerHeader + "\n")
	}
	e.Seq = len(entries) + 1
	e.Prev = genesis
	if len(entries) > 0 {
		e.Prev = entries[len(entries)-1].hash
	}
	if e.Time == "" {
		e.Time = c.now().UTC().Format(time.RFC3339)
	}
	line := e.marshal()
	e.hash = hashLine(line)
	out := make([]byte, 0, len(data)+len(line)+1)
	out = append(append(append(out, data...), line...), '\n')
	if err := safefile.Write(path, out, 0o644); err != nil {
		return fmt.Errorf("writing the ledger: %w", err)
	}
	c.Ledger = append(entries, e)
	return nil
}
