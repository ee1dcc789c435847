// Package fuzzseed reads the seed corpus of a fuzz target from the
// package's testdata/seeds folder, and fails the target when the pattern
// matches no file, so a moved or renamed folder cannot silently empty the
// corpus.
package fuzzseed

import (
	"os"
	"path/filepath"
	"testing"
)

// Load returns the contents of every file in testdata/seeds that matches
// pattern (a filepath.Match pattern), in name order. It fails tb when none
// matches or a file cannot be read.
func Load(tb testing.TB, pattern string) [][]byte {
	tb.Helper()
	return Glob(tb, filepath.Join("testdata", "seeds", pattern))
}

// Glob is [Load] for seeds kept elsewhere, such as test tables that serve
// as seeds too: glob is a filepath.Glob pattern relative to the package.
func Glob(tb testing.TB, glob string) [][]byte {
	tb.Helper()
	files, err := filepath.Glob(glob)
	if err != nil || len(files) == 0 {
		tb.Fatalf("no seed files match %s", filepath.ToSlash(glob))
	}
	out := make([][]byte, 0, len(files))
	for _, p := range files {
		b, err := os.ReadFile(p)
		if err != nil {
			tb.Fatal(err)
		}
		out = append(out, b)
	}
	return out
}
