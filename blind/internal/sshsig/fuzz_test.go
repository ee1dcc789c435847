package sshsig

import (
	"tandem/compare/fuzzseed"
	"testing"
)

func FuzzSSHSig(f *testing.F) {
	for _, b := range fuzzseed.Load(f, "*.sig") {
		f.Add(b)
		f.Add([]byte(Flatten(b)))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		Parse(data)                // must not panic
		Parse(Armor(string(data))) // nor on a re-armored one-line form
	})
}
