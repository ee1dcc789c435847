package protocol

import (
	"os"
	"path/filepath"
	"testing"
)

func FuzzProtocol(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "seeds", "*.toml"))
	if len(files) == 0 {
		f.Fatal("no seed files match testdata/seeds/*.toml")
	}
	for _, p := range files {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Add([]byte(Template("x", "", "")))
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := Parse("fuzz.toml", data)
		if err == nil && (len(p.Teams()) < 2 || len(p.Quorum) == 0 || p.CustodianPublicKey() == nil) {
			t.Fatalf("accepted an impossible protocol")
		}
	})
}
