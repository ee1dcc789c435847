package blind

import (
	"os"
	"path/filepath"
	"testing"

	"tandem/blind/internal/sshsig"
)

// seeds reads the seed files matching pattern and fails when there are
// none, so a moved folder cannot silently empty the corpus.
func seeds(f *testing.F, pattern string) [][]byte {
	f.Helper()
	files, _ := filepath.Glob(filepath.Join("testdata", "seeds", pattern))
	if len(files) == 0 {
		f.Fatalf("no seed files match testdata/seeds/%s", pattern)
	}
	var out [][]byte
	for _, p := range files {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		out = append(out, b)
	}
	return out
}

// FuzzLedger: the ledger parser never panics, and an accepted ledger
// re-serialises to the same bytes.
func FuzzLedger(f *testing.F) {
	for _, s := range seeds(f, "ledger*") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		entries, err := ParseLedger("fuzz", data)
		if err != nil {
			return
		}
		out := []byte(LedgerHeader + "\n")
		for _, e := range entries {
			out = append(append(out, e.marshal()...), '\n')
		}
		if string(out) != string(data) {
			t.Fatalf("accepted a ledger that does not round-trip")
		}
	})
}

// FuzzStatement: accepted statements are canonical.
func FuzzStatement(f *testing.F) {
	for _, s := range seeds(f, "*.statement") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		st, err := ParseStatement("fuzz", data)
		if err != nil {
			return
		}
		if string(st.Encode()) != string(data) {
			t.Fatalf("accepted a statement that does not round-trip")
		}
	})
}

func FuzzProtocol(f *testing.F) {
	for _, s := range seeds(f, "*.toml") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := ParseProtocol("fuzz.toml", data)
		if err == nil && (len(p.Teams()) < 2 || len(p.Quorum) == 0) {
			t.Fatalf("accepted an impossible protocol")
		}
	})
}

func FuzzTableFile(f *testing.F) {
	for _, s := range seeds(f, "*.blinded.csv") {
		f.Add(s)
	}
	o := &Observable{Name: "muon_rate", Edges: []string{"lo", "hi"}}
	f.Fuzz(func(t *testing.T, data []byte) {
		tf, err := DecodeTableFile("fuzz", data, Blinded, o)
		if err != nil {
			return
		}
		if string(tf.Encode()) != string(data) {
			t.Fatalf("accepted a table file that does not round-trip")
		}
	})
}

func FuzzSSHSig(f *testing.F) {
	for _, s := range seeds(f, "*.sig") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		sshsig.Parse(data) // must not panic
	})
}

// FuzzKeyFile: the key-file parser never panics and accepts only the one
// canonical form.
func FuzzKeyFile(f *testing.F) {
	for _, s := range seeds(f, "*.key") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		k, err := parseKey(data)
		if err != nil {
			return
		}
		if string(k.marshal()) != string(data) {
			t.Fatalf("accepted a non-canonical key file %q", data)
		}
	})
}
