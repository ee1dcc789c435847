package sshsig

import (
	"os"
	"path/filepath"
	"testing"
)

func FuzzSSHSig(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "seeds", "*.sig"))
	if len(files) == 0 {
		f.Fatal("no seed files match testdata/seeds/*.sig")
	}
	for _, p := range files {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
		f.Add([]byte(Flatten(b)))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		Parse(data)                // must not panic
		Parse(Armor(string(data))) // nor on a re-armored one-line form
	})
}
