package protocol

import (
	"tandem/compare/fuzzseed"
	"testing"
)

func FuzzProtocol(f *testing.F) {
	for _, b := range fuzzseed.Load(f, "*.toml") {
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
