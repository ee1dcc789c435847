package campaign

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"strings"
	"syscall"
)

// root reads and writes files beneath a campaign folder only: every path
// is campaign-relative, with '/' separators, no "..", and no component may
// be a symbolic link.
type root struct{ dir string }

// ErrSymlink marks a symbolic link found inside a campaign.
var ErrSymlink = errors.New("symbolic link inside the campaign")

func (r root) abs(rel string) string { return filepath.Join(r.dir, filepath.FromSlash(rel)) }

// check refuses a path that leaves the campaign or passes through a
// symbolic link (the final component included, when it exists).
func (r root) check(rel string) error {
	if rel == "" || path.IsAbs(rel) || path.Clean(rel) != rel || rel == ".." || strings.HasPrefix(rel, "../") {
		return fmt.Errorf("%s: not a path inside the campaign", rel)
	}
	if fi, err := os.Lstat(r.dir); err == nil && fi.Mode()&fs.ModeSymlink != 0 {
		return fmt.Errorf("%s: %w; tandem follows no links in a campaign", r.dir, ErrSymlink)
	}
	cur := r.dir
	for _, c := range strings.Split(rel, "/") {
		cur = filepath.Join(cur, c)
		fi, err := os.Lstat(cur)
		if err != nil {
			if errors.Is(err, fs.ErrNotExist) {
				return nil
			}
			return err
		}
		if fi.Mode()&fs.ModeSymlink != 0 {
			return fmt.Errorf("%s: %w; tandem follows no links in a campaign", filepath.Join(filepath.Base(r.dir), filepath.FromSlash(rel[:len(cur)-len(r.dir)-1])), ErrSymlink)
		}
	}
	return nil
}

// ReadFile reads a file of at most max bytes.
func (r root) ReadFile(rel string, max int64) ([]byte, error) {
	if err := r.check(rel); err != nil {
		return nil, err
	}
	f, err := os.OpenFile(r.abs(rel), os.O_RDONLY|oNoFollow, 0)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if fi, err := f.Stat(); err == nil && !fi.Mode().IsRegular() {
		return nil, fmt.Errorf("%s: not a regular file", rel)
	}
	data, err := io.ReadAll(io.LimitReader(f, max+1))
	if err != nil {
		return nil, err
	}
	if int64(len(data)) > max {
		return nil, fmt.Errorf("%s: larger than %d bytes", rel, max)
	}
	return data, nil
}

// Exists reports whether rel exists (as anything but a link).
func (r root) Exists(rel string) bool {
	if r.check(rel) != nil {
		return false
	}
	_, err := os.Lstat(r.abs(rel))
	return err == nil
}

func (r root) mkdirs(rel string) error {
	dir := path.Dir(rel)
	if dir == "." {
		return nil
	}
	if err := r.check(dir); err != nil {
		return err
	}
	return os.MkdirAll(r.abs(dir), 0o755)
}

// writeTemp writes data to a synced temporary file beside rel.
func (r root) writeTemp(rel string, data []byte, perm os.FileMode) (string, error) {
	if err := r.mkdirs(rel); err != nil {
		return "", err
	}
	f, err := os.CreateTemp(filepath.Dir(r.abs(rel)), "."+path.Base(rel)+".tmp-*")
	if err != nil {
		return "", err
	}
	ok := false
	defer func() {
		if !ok {
			f.Close()
			os.Remove(f.Name())
		}
	}()
	if err := f.Chmod(perm); err != nil {
		return "", err
	}
	if _, err := f.Write(data); err != nil {
		return "", err
	}
	if err := f.Sync(); err != nil {
		return "", err
	}
	if err := f.Close(); err != nil {
		return "", err
	}
	ok = true
	return f.Name(), nil
}

// WriteAtomic replaces rel with data: temporary file, fsync, rename, fsync
// of the folder.
func (r root) WriteAtomic(rel string, data []byte) error {
	if err := r.check(rel); err != nil {
		return err
	}
	tmp, err := r.writeTemp(rel, data, 0o644)
	if err != nil {
		return err
	}
	if err := os.Rename(tmp, r.abs(rel)); err != nil {
		os.Remove(tmp)
		return err
	}
	return syncDir(filepath.Dir(r.abs(rel)))
}

// CreateExclusive writes rel, only if it does not exist yet, without
// syncing: the caller calls [root.Sync] on what it wrote before the ledger
// entry that commits it. A file torn by a crash is not in the ledger, and
// the next step recognises and removes it.
func (r root) CreateExclusive(rel string, data []byte, perm os.FileMode) error {
	if err := r.check(rel); err != nil {
		return err
	}
	if err := r.mkdirs(rel); err != nil {
		return err
	}
	f, err := os.OpenFile(r.abs(rel), os.O_WRONLY|os.O_CREATE|os.O_EXCL|oNoFollow, perm)
	if err != nil {
		if errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("%s already exists; refusing to overwrite it", rel)
		}
		return err
	}
	if _, err := f.Write(data); err != nil {
		f.Close()
		os.Remove(r.abs(rel))
		return err
	}
	if err := f.Close(); err != nil {
		os.Remove(r.abs(rel))
		return err
	}
	return nil
}

// Sync makes the files written with CreateExclusive durable, with their
// folder entries.
func (r root) Sync(rels []string) error { return r.sync(rels) }

// Append adds data at the end of rel (created if missing) with O_APPEND,
// then fsyncs it.
func (r root) Append(rel string, data []byte) error {
	if err := r.check(rel); err != nil {
		return err
	}
	f, err := os.OpenFile(r.abs(rel), os.O_WRONLY|os.O_APPEND|os.O_CREATE|oNoFollow, 0o644)
	if err != nil {
		return err
	}
	if _, err := f.Write(data); err != nil {
		f.Close()
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// Truncate cuts rel to size bytes and fsyncs it (only for the partial
// last line an interrupted ledger append leaves, which was never
// committed).
func (r root) Truncate(rel string, size int64) error {
	if err := r.check(rel); err != nil {
		return err
	}
	f, err := os.OpenFile(r.abs(rel), os.O_WRONLY|oNoFollow, 0)
	if err != nil {
		return err
	}
	defer f.Close()
	if err := f.Truncate(size); err != nil {
		return err
	}
	return f.Sync()
}

// Remove deletes rel.
func (r root) Remove(rel string) error {
	if err := r.check(rel); err != nil {
		return err
	}
	return os.Remove(r.abs(rel))
}

// Walk lists every regular file beneath the campaign as a relative path,
// skipping skip (top-level folder names) and refusing symbolic links.
func (r root) Walk(skip func(rel string, dir bool) bool) ([]string, error) {
	var out []string
	var links []string
	err := filepath.WalkDir(r.dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(r.dir, p)
		rel = filepath.ToSlash(rel)
		if rel == "." {
			return nil
		}
		if d.Type()&fs.ModeSymlink != 0 {
			links = append(links, rel)
			return nil
		}
		if skip(rel, d.IsDir()) {
			if d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if d.Type().IsRegular() {
			out = append(out, rel)
		}
		return nil
	})
	if len(links) > 0 {
		return out, &SymlinkError{Paths: links}
	}
	return out, err
}

// SymlinkError names the symbolic links found in a campaign.
type SymlinkError struct{ Paths []string }

func (e *SymlinkError) Error() string {
	return fmt.Sprintf("%s: %v; tandem follows no links in a campaign", strings.Join(e.Paths, ", "), ErrSymlink)
}

func (e *SymlinkError) Unwrap() error { return ErrSymlink }

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	if err := d.Sync(); err != nil && !errors.Is(err, syscall.EINVAL) {
		return err
	}
	return nil
}

// syncEach fsyncs every file and then every folder holding one.
func syncEach(r root, rels []string) error {
	dirs := map[string]bool{}
	for _, rel := range rels {
		f, err := os.OpenFile(r.abs(rel), os.O_RDWR|oNoFollow, 0)
		if err != nil {
			return err
		}
		err = f.Sync()
		f.Close()
		if err != nil {
			return err
		}
		dirs[filepath.Dir(r.abs(rel))] = true
	}
	for d := range dirs {
		if err := syncDir(d); err != nil {
			return err
		}
	}
	return nil
}
