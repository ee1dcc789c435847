//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package safefs

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestBatch: a batch creates files with their content and mode, refuses
// an existing name and every link (at the name or above it), and both
// ways of syncing succeed.
func TestBatch(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		camp, out := tree(t)
		r := open(camp)
		must(t, r.MkdirAll("d/e", 0o755))
		b := r.Batch()
		for i := 0; i < 20; i++ {
			must(t, b.CreateExclusive(fmt.Sprintf("d/e/f%d", i), []byte(fmt.Sprint("content ", i)), 0o640))
		}
		must(t, b.CreateExclusive("top", []byte("top"), 0o644))
		if err := b.CreateExclusive("top", []byte("again"), 0o644); !errors.Is(err, fs.ErrExist) || !strings.Contains(err.Error(), "top") {
			t.Errorf("second create: %v", err)
		}
		for _, rel := range []string{"dangling", "la/new", "a/lb/new", "out/new", "a/b/c.txt"} {
			if err := b.CreateExclusive(rel, []byte("x"), 0o644); err == nil {
				t.Errorf("%s: created", rel)
			}
		}
		if _, err := os.Lstat(filepath.Join(out, "none")); err == nil {
			t.Errorf("file created outside")
		}
		if b, _ := os.ReadFile(filepath.Join(camp, "a", "b", "c.txt")); string(b) != "inside" {
			t.Errorf("existing file changed: %q", b)
		}
		must(t, b.Sync())
		must(t, b.syncEach())
		for i := 0; i < 20; i++ {
			p := filepath.Join(camp, "d", "e", fmt.Sprintf("f%d", i))
			got, err := os.ReadFile(p)
			if err != nil || string(got) != fmt.Sprint("content ", i) {
				t.Errorf("f%d: %q %v", i, got, err)
			}
			if fi, _ := os.Stat(p); fi.Mode().Perm() != 0o640 {
				t.Errorf("f%d: mode %v", i, fi.Mode().Perm())
			}
		}
		if len(b.files) != 21 {
			t.Errorf("batch records %d files, want 21", len(b.files))
		}
		if left, _ := r.Leftovers(); len(left) != 0 {
			t.Errorf("leftovers: %q", left)
		}
		if err := r.Batch().Sync(); err != nil {
			t.Errorf("empty batch: %v", err)
		}
	})
}

// BenchmarkCreate1000 writes 1000 files of 2 KB, as a blind step at
// N = 500 does: one by one, each synced with its directory, or as a batch.
//
//	go test ./blind/internal/safefs -run '^$' -bench Create1000 -benchtime 3x
func BenchmarkCreate1000(b *testing.B) {
	data := []byte(strings.Repeat("x", 2048))
	for _, mode := range []string{"each", "batch-syncfs", "batch-fsync-each"} {
		b.Run(mode, func(b *testing.B) {
			for b.Loop() {
				b.StopTimer()
				dir := b.TempDir()
				r, err := Open(dir)
				if err != nil {
					b.Fatal(err)
				}
				r.MkdirAll("t", 0o755)
				b.StartTimer()
				bt := r.Batch()
				for i := 0; i < 1000; i++ {
					rel := fmt.Sprintf("t/f%d", i)
					if mode == "each" {
						err = r.CreateExclusive(rel, data, 0o644)
					} else {
						err = bt.CreateExclusive(rel, data, 0o644)
					}
					if err != nil {
						b.Fatal(err)
					}
				}
				switch mode {
				case "batch-syncfs":
					err = bt.Sync()
				case "batch-fsync-each":
					err = bt.syncEach()
				}
				if err != nil {
					b.Fatal(err)
				}
				r.Close()
			}
		})
	}
}
