package format

import (
	"tandem/compare/fuzzseed"
	"testing"
)

// seeds reads the seed files matching pattern and fails when there are
// none, so a moved folder cannot silently empty the corpus.
func seeds(f *testing.F, pattern string) [][]byte {
	f.Helper()
	return fuzzseed.Load(f, pattern)
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
			out = append(append(out, e.Line()...), '\n')
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

// FuzzTableFile: accepted blinded and unblinded table files are canonical.
func FuzzTableFile(f *testing.F) {
	for _, s := range seeds(f, "*blinded.csv") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, kind := range []TableKind{Blinded, Unblinded, Sealed} {
			tf, err := DecodeTableFile("fuzz", data, kind, "lo", "hi")
			if err != nil {
				continue
			}
			if string(tf.Encode()) != string(data) {
				t.Fatalf("accepted a %s table file that does not round-trip", kind)
			}
		}
	})
}

// FuzzKeyFile: the key-file parser never panics and accepts only the one
// canonical form.
func FuzzKeyFile(f *testing.F) {
	for _, s := range seeds(f, "*.key") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		k, err := DecodeKey(data)
		if err != nil {
			return
		}
		if string(EncodeKey(k)) != string(data) {
			t.Fatalf("accepted a non-canonical key file %q", data)
		}
	})
}

// FuzzEntryFile: the entry file parser never panics, and an accepted file
// re-encodes to the same bytes.
func FuzzEntryFile(f *testing.F) {
	for _, s := range seeds(f, "entry-*") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		e, err := DecodeEntryFile("fuzz", data)
		if err != nil {
			return
		}
		if string(EncodeEntryFile(&e)) != string(data) {
			t.Fatalf("accepted an entry file that does not round-trip")
		}
		if e.Hash() != HashLine(e.Line()) {
			t.Fatalf("hash is not the hash of the line")
		}
	})
}

// FuzzCountsFile: the count-tests parser never panics, and an accepted
// file re-encodes to the same bytes.
func FuzzCountsFile(f *testing.F) {
	for _, s := range seeds(f, "*.counts") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		cf, err := DecodeCountsFile("fuzz", data)
		if err != nil {
			return
		}
		if string(cf.Encode()) != string(data) {
			t.Fatalf("accepted a count-tests file that does not round-trip")
		}
	})
}
