//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly)

package safefs

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
)

// Root is an open campaign folder. Here it rests on [os.Root], which keeps
// every path beneath the folder; symbolic links are refused by an Lstat of
// every component before each operation (best effort: a component swapped
// between the check and the use is not caught).
type Root struct {
	dir  string
	root *os.Root
}

// Open opens dir as the root. dir itself must be a directory and not a
// symbolic link; links in the path above it are followed as usual.
func Open(dir string) (*Root, error) {
	const op = "open campaign folder"
	if dir == "" {
		return nil, &Error{Op: op, Path: dir, Kind: ErrInvalidPath, Err: errors.New("empty path")}
	}
	clean := filepath.Clean(dir)
	fi, err := os.Lstat(clean)
	if err != nil {
		return nil, &Error{Op: op, Path: dir, Err: err}
	}
	if isLink(fi) {
		return nil, &Error{Op: op, Path: dir, Link: dir, Kind: ErrSymlink}
	}
	if !fi.IsDir() {
		return nil, &Error{Op: op, Path: dir, Kind: ErrNotRegular, Err: errors.New("not a directory")}
	}
	root, err := os.OpenRoot(clean)
	if err != nil {
		return nil, &Error{Op: op, Path: dir, Err: err}
	}
	return &Root{dir: clean, root: root}, nil
}

// Dir returns the root's path as given to Open, cleaned.
func (r *Root) Dir() string { return r.dir }

// Close releases the root.
func (r *Root) Close() error { return r.root.Close() }

// isLink: a symbolic link, or on Windows a junction or other reparse
// point, which Go reports as irregular.
func isLink(fi fs.FileInfo) bool {
	return fi.Mode()&(fs.ModeSymlink|fs.ModeIrregular) != 0
}

func native(rel string) string { return filepath.FromSlash(rel) }

// check validates rel and refuses a link at any existing component; upTo
// is how many components are checked (all, or all but the last).
func (r *Root) check(op, rel string, lastToo bool) ([]string, error) {
	comps, err := split(op, rel)
	if err != nil {
		return nil, err
	}
	n := len(comps)
	if !lastToo && n > 0 {
		n--
	}
	for i := 1; i <= n; i++ {
		fi, err := r.root.Lstat(native(join(comps, i)))
		if err != nil {
			if errors.Is(err, fs.ErrNotExist) {
				return comps, nil
			}
			return nil, &Error{Op: op, Path: rel, Err: err}
		}
		if isLink(fi) {
			return nil, &Error{Op: op, Path: rel, Link: join(comps, i), Kind: ErrSymlink}
		}
	}
	return comps, nil
}

func (r *Root) openRegular(op, rel string, dirOK bool) (*os.File, fs.FileInfo, error) {
	if _, err := r.check(op, rel, true); err != nil {
		return nil, nil, err
	}
	f, err := r.root.Open(native(rel))
	if err != nil {
		return nil, nil, &Error{Op: op, Path: rel, Err: err}
	}
	fi, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, nil, &Error{Op: op, Path: rel, Err: err}
	}
	if !fi.Mode().IsRegular() && !(dirOK && fi.IsDir()) {
		f.Close()
		return nil, nil, &Error{Op: op, Path: rel, Kind: ErrNotRegular}
	}
	return f, fi, nil
}

// ReadFile reads the regular file rel whole, refusing one larger than max
// bytes with [ErrTooLarge]; it never holds more than max+1 bytes.
func (r *Root) ReadFile(rel string, max int64) ([]byte, error) {
	f, fi, err := r.openRegular("read", rel, false)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return readLimited("read", rel, f, fi.Size(), max)
}

// Open opens the regular file or directory rel for reading.
func (r *Root) Open(rel string) (*os.File, error) {
	f, _, err := r.openRegular("open", rel, true)
	return f, err
}

func parentOf(comps []string) string { return join(comps, len(comps)-1) }

func inDir(dir, name string) string {
	if dir == "." {
		return name
	}
	return dir + "/" + name
}

// writeTemp writes a synced temporary file beside comps' last component.
func (r *Root) writeTemp(comps []string, data []byte, perm os.FileMode) (string, error) {
	tmp := inDir(parentOf(comps), tempName(comps[len(comps)-1]))
	f, err := r.root.OpenFile(native(tmp), os.O_WRONLY|os.O_CREATE|os.O_EXCL, perm.Perm())
	if err != nil {
		return "", err
	}
	_, err = f.Write(data)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		r.root.Remove(native(tmp))
		return "", err
	}
	return tmp, nil
}

func (r *Root) syncDir(dir string) {
	if d, err := r.root.Open(native(dir)); err == nil {
		d.Sync() // not every system can sync a directory
		d.Close()
	}
}

func (r *Root) target(op, rel string) ([]string, error) {
	comps, err := r.check(op, rel, true)
	if err != nil {
		return nil, err
	}
	if len(comps) == 0 {
		return nil, &Error{Op: op, Path: rel, Kind: ErrInvalidPath, Err: errors.New("the campaign folder itself")}
	}
	if fi, err := r.root.Lstat(native(rel)); err == nil && !fi.Mode().IsRegular() {
		return nil, &Error{Op: op, Path: rel, Kind: ErrNotRegular}
	}
	return comps, nil
}

// WriteAtomic replaces rel with data through a synced temporary file
// named with [TempPrefix] in the same directory and a rename.
func (r *Root) WriteAtomic(rel string, data []byte, perm os.FileMode) error {
	const op = "write"
	comps, err := r.target(op, rel)
	if err != nil {
		return err
	}
	tmp, err := r.writeTemp(comps, data, perm)
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	if err := r.root.Rename(native(tmp), native(rel)); err != nil {
		r.root.Remove(native(tmp))
		return &Error{Op: op, Path: rel, Err: err}
	}
	r.syncDir(parentOf(comps))
	return nil
}

// CreateExclusive creates rel with data, failing with an error matching
// [fs.ErrExist] if it exists; the file appears whole (hard link of a
// synced temporary file) where the system allows it.
func (r *Root) CreateExclusive(rel string, data []byte, perm os.FileMode) error {
	const op = "create"
	comps, err := r.check(op, rel, false)
	if err != nil {
		return err
	}
	if len(comps) == 0 {
		return &Error{Op: op, Path: rel, Kind: ErrInvalidPath, Err: errors.New("the campaign folder itself")}
	}
	exists := func() error {
		return &Error{Op: op, Path: rel, Err: fmt.Errorf("refusing to overwrite it: %w", fs.ErrExist)}
	}
	if _, err := r.root.Lstat(native(rel)); err == nil {
		return exists()
	}
	tmp, err := r.writeTemp(comps, data, perm)
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	lerr := r.root.Link(native(tmp), native(rel))
	r.root.Remove(native(tmp))
	if lerr != nil {
		if errors.Is(lerr, fs.ErrExist) {
			return exists()
		}
		f, err := r.root.OpenFile(native(rel), os.O_WRONLY|os.O_CREATE|os.O_EXCL, perm.Perm())
		if errors.Is(err, fs.ErrExist) {
			return exists()
		}
		if err != nil {
			return &Error{Op: op, Path: rel, Err: err}
		}
		_, err = f.Write(data)
		if err == nil {
			err = f.Sync()
		}
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			r.root.Remove(native(rel))
			return &Error{Op: op, Path: rel, Err: err}
		}
	}
	r.syncDir(parentOf(comps))
	return nil
}

// Append adds data at the end of rel (created with mode 0644) with one
// write on a file opened for appending, then syncs it.
func (r *Root) Append(rel string, data []byte) error {
	const op = "append"
	if _, err := r.target(op, rel); err != nil {
		return err
	}
	f, err := r.root.OpenFile(native(rel), os.O_WRONLY|os.O_APPEND|os.O_CREATE, 0o644)
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	defer f.Close()
	n, err := f.Write(data)
	if err == nil && n != len(data) {
		err = fmt.Errorf("short write: %d of %d bytes", n, len(data))
	}
	if err == nil {
		err = f.Sync()
	}
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	return nil
}

// MkdirAll creates rel and its missing parents, refusing a link at any
// component.
func (r *Root) MkdirAll(rel string, perm os.FileMode) error {
	const op = "mkdir"
	comps, err := split(op, rel)
	if err != nil {
		return err
	}
	for i := 1; i <= len(comps); i++ {
		p := native(join(comps, i))
		if err := r.root.Mkdir(p, perm.Perm()); err != nil && !errors.Is(err, fs.ErrExist) {
			return &Error{Op: op, Path: rel, Err: err}
		}
		fi, err := r.root.Lstat(p)
		if err != nil {
			return &Error{Op: op, Path: rel, Err: err}
		}
		if isLink(fi) {
			return &Error{Op: op, Path: rel, Link: join(comps, i), Kind: ErrSymlink}
		}
		if !fi.IsDir() {
			return &Error{Op: op, Path: rel, Err: fmt.Errorf("%s is not a directory", join(comps, i))}
		}
	}
	return nil
}

// Lock takes an exclusive lock on the lock file rel, created without
// following a link; it blocks until the lock is free.
func (r *Root) Lock(rel string) (unlock func() error, err error) {
	const op = "lock"
	if _, err := r.target(op, rel); err != nil {
		return nil, err
	}
	f, err := r.root.OpenFile(native(rel), os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	unlock, err = lockFile(f)
	if err != nil {
		f.Close()
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	return unlock, nil
}

// Remove removes the file or empty directory rel; a link is refused.
func (r *Root) Remove(rel string) error {
	const op = "remove"
	if _, err := r.check(op, rel, true); err != nil {
		return err
	}
	if err := r.root.Remove(native(rel)); err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	return nil
}

// Stat describes rel without following it (lstat).
func (r *Root) Stat(rel string) (fs.FileInfo, error) {
	const op = "stat"
	if _, err := r.check(op, rel, false); err != nil {
		return nil, err
	}
	fi, err := r.root.Lstat(native(rel))
	if err != nil {
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	return fi, nil
}

// ReadDir lists the directory rel, sorted by name, without following
// entries.
func (r *Root) ReadDir(rel string) ([]fs.DirEntry, error) {
	const op = "read directory"
	if _, err := r.check(op, rel, true); err != nil {
		return nil, err
	}
	f, err := r.root.Open(native(rel))
	if err != nil {
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	defer f.Close()
	ents, err := f.ReadDir(-1)
	if err != nil {
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	slices.SortFunc(ents, func(a, b fs.DirEntry) int { return strings.Compare(a.Name(), b.Name()) })
	return ents, nil
}

// platformCheck refuses drive letters and alternate data streams on
// Windows ("C:x", "file:stream").
func platformCheck(rel string) error {
	if runtime.GOOS == "windows" && strings.ContainsRune(rel, ':') {
		return errors.New("drive or stream name")
	}
	return nil
}
