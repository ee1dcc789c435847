// Package outfile writes the files tandem produces outside a campaign
// folder (the -o reports of table mode and sync, summaries, unmatched-event
// lists, and new files such as a protocol template or a key) so that a crash
// or an error leaves either the old content or the new, never a torn or
// partial file: data goes to a temporary file in the same directory, is
// synced, and is renamed (or, for files that must not be overwritten,
// hard-linked) into place, and the directory is synced after. Campaign files
// go through blind/internal/safefs instead.
package outfile

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Write atomically replaces path with data, creating parent directories.
func Write(path string, data []byte, perm os.FileMode) error {
	return WriteFrom(path, perm, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// ErrNotRegular is returned when the path to replace exists and is not a
// regular file (a symbolic link, a directory, a device): renaming over it
// would replace the link itself, or write where the user did not mean.
var ErrNotRegular = errors.New("exists and is not a regular file")

// WriteFrom atomically replaces path with what fill writes. If fill returns
// an error, nothing is written and the temporary file is removed. A path
// that exists and is not a regular file is refused before anything is
// written.
func WriteFrom(path string, perm os.FileMode, fill func(io.Writer) error) error {
	if err := checkRegular(path); err != nil {
		return err
	}
	tmp, err := writeTemp(path, perm, fill)
	if err != nil {
		return err
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return err
	}
	return syncDir(filepath.Dir(path))
}

// Create writes data to path only if path does not exist yet, for files that
// must never be overwritten such as secret keys. The new file appears whole
// or not at all.
func Create(path string, data []byte, perm os.FileMode) error {
	if _, err := os.Lstat(path); err == nil {
		return fmt.Errorf("%s already exists; refusing to overwrite it", path)
	}
	tmp, err := writeTemp(path, perm, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
	if err != nil {
		return err
	}
	defer os.Remove(tmp)
	if err := os.Link(tmp, path); err != nil {
		if errors.Is(err, os.ErrExist) {
			return fmt.Errorf("%s already exists; refusing to overwrite it", path)
		}
		return err
	}
	return syncDir(filepath.Dir(path))
}

// writeTemp fills a synced temporary file with mode perm beside path and
// returns its name; on error it leaves nothing behind.
func writeTemp(path string, perm os.FileMode, fill func(io.Writer) error) (name string, err error) {
	dir := filepath.Dir(path)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", err
	}
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return "", err
	}
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(f.Name())
		}
	}()
	if err = f.Chmod(perm); err != nil {
		return "", err
	}
	if err = fill(f); err != nil {
		return "", err
	}
	if err = f.Sync(); err != nil {
		return "", err
	}
	if err = f.Close(); err != nil {
		return "", err
	}
	return f.Name(), nil
}

// syncDir makes a rename durable. File systems that cannot sync a
// directory still rename atomically, so that error is ignored.
func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	d.Sync()
	return nil
}

// checkRegular refuses an existing path that is not a regular file.
func checkRegular(path string) error {
	fi, err := os.Lstat(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return err
	}
	if !fi.Mode().IsRegular() {
		return &os.PathError{Op: "write", Path: path, Err: ErrNotRegular}
	}
	return nil
}
