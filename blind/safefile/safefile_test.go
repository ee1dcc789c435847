package safefile

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
