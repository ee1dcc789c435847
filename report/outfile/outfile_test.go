package outfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
)

func TestWriteLeavesNothingOnError(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "sub", "out.txt")
	err := WriteFrom(p, 0o644, func(w io.Writer) error {
		w.Write([]byte("partial"))
		return errors.New("renderer failed")
	})
	if err == nil {
		t.Fatal("error lost")
	}
	entries, _ := os.ReadDir(filepath.Dir(p))
	if len(entries) != 0 {
		t.Errorf("left behind: %v", entries)
	}
	if err := Write(p, []byte("one"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := Write(p, []byte("two"), 0o644); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(p); string(b) != "two" {
		t.Errorf("content %q", b)
	}
}

func TestCreateNeverOverwrites(t *testing.T) {
	p := filepath.Join(t.TempDir(), "secret.key")
	if err := Create(p, []byte("first"), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := Create(p, []byte("second"), 0o600); err == nil {
		t.Fatal("overwrote an existing file")
	}
	b, _ := os.ReadFile(p)
	fi, _ := os.Stat(p)
	if string(b) != "first" || fi.Mode().Perm() != 0o600 {
		t.Errorf("content %q mode %v", b, fi.Mode().Perm())
	}
	entries, _ := os.ReadDir(filepath.Dir(p))
	if len(entries) != 1 {
		t.Errorf("temporary files left: %v", entries)
	}
}

// TestWriteRefusesLink: replacing a symbolic link (or a directory) would
// replace the link itself; it is refused and the link stays.
func TestWriteRefusesLink(t *testing.T) {
	dir := t.TempDir()
	target := filepath.Join(dir, "target")
	if err := os.WriteFile(target, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(dir, "link.json")
	if err := os.Symlink(target, link); err != nil {
		t.Skip("no symbolic links here:", err)
	}
	err := Write(link, []byte("new"), 0o644)
	if !errors.Is(err, ErrNotRegular) {
		t.Fatalf("Write over a link: got %v, want ErrNotRegular", err)
	}
	if fi, err := os.Lstat(link); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Fatalf("the link was replaced: %v", err)
	}
	if b, _ := os.ReadFile(target); string(b) != "old" {
		t.Fatalf("the target changed: %q", b)
	}
	if err := Write(dir, []byte("x"), 0o644); !errors.Is(err, ErrNotRegular) {
		t.Fatalf("Write over a directory: got %v", err)
	}
}
