package campaign

import (
	"errors"
	"fmt"
	"io/fs"
	"path"
	"path/filepath"
	"strings"

	"tandem/blind/internal/safefs"
)

// root reads and writes files beneath a campaign folder only, through
// package safefs: every path is campaign-relative with '/' separators, is
// resolved beneath the folder, and no component may be a symbolic link.
type root struct {
	dir string
	fs  *safefs.Root
}

// ErrSymlink marks a symbolic link found inside a campaign.
var ErrSymlink = safefs.ErrSymlink

func openRoot(dir string) (root, error) {
	r, err := safefs.Open(dir)
	if err != nil {
		return root{dir: dir}, err
	}
	return root{dir: dir, fs: r}, nil
}

func (r root) abs(rel string) string { return filepath.Join(r.dir, filepath.FromSlash(rel)) }

// ReadFile reads a file of at most max bytes.
func (r root) ReadFile(rel string, max int64) ([]byte, error) { return r.fs.ReadFile(rel, max) }

// Exists reports whether rel exists (a link included).
func (r root) Exists(rel string) bool {
	_, err := r.fs.Stat(rel)
	return err == nil
}

func (r root) mkdirs(rel string) error {
	if dir := path.Dir(rel); dir != "." {
		return r.fs.MkdirAll(dir, 0o755)
	}
	return nil
}

// WriteAtomic replaces rel with data (temporary file, fsync, rename).
func (r root) WriteAtomic(rel string, data []byte) error {
	if err := r.mkdirs(rel); err != nil {
		return err
	}
	return r.fs.WriteAtomic(rel, data, 0o644)
}

// CreateExclusive writes rel whole and synced, only if it does not exist.
// It is committed by the ledger entry that follows; a file left without
// one by a crash is recognised and removed by the next step.
func (r root) CreateExclusive(rel string, data []byte, perm fs.FileMode) error {
	if err := r.mkdirs(rel); err != nil {
		return err
	}
	err := r.fs.CreateExclusive(rel, data, perm)
	if errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("%s already exists; refusing to overwrite it", rel)
	}
	return err
}

// batch is a set of new files made durable together (see [safefs.Batch]):
// the caller writes the ledger entry that covers them only after sync.
type batch struct {
	r root
	b *safefs.Batch
}

func (r root) batch() batch { return batch{r: r, b: r.fs.Batch()} }

// CreateExclusive writes rel whole, only if it does not exist, unsynced.
func (b batch) CreateExclusive(rel string, data []byte, perm fs.FileMode) error {
	if err := b.r.mkdirs(rel); err != nil {
		return err
	}
	err := b.b.CreateExclusive(rel, data, perm)
	if errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("%s already exists; refusing to overwrite it", rel)
	}
	return err
}

// sync makes every file of the batch durable.
func (b batch) sync() error {
	if err := b.b.Sync(); err != nil {
		return fmt.Errorf("making the new files durable: %w", err)
	}
	return nil
}

// Append adds data at the end of rel (created if missing) with one
// O_APPEND write, then fsyncs it.
func (r root) Append(rel string, data []byte) error { return r.fs.Append(rel, data) }

// Remove deletes rel.
func (r root) Remove(rel string) error { return r.fs.Remove(rel) }

// Lock takes the campaign's exclusive lock (.tandem.lock), so two
// processes cannot append to the ledger at once. It blocks until the lock
// is free.
func (r root) Lock() (func(), error) {
	unlock, err := r.fs.Lock(lockFile)
	if err != nil {
		return nil, fmt.Errorf("taking the campaign lock: %w", err)
	}
	return func() { unlock() }, nil
}

// Walk lists every regular file beneath the campaign as a relative path,
// skipping what skip says, and returns the symbolic links it found as a
// [SymlinkError].
func (r root) Walk(skip func(rel string, dir bool) bool) ([]string, error) {
	var out []string
	var walk func(dir string) error
	walk = func(dir string) error {
		entries, err := r.fs.ReadDir(dir)
		if err != nil {
			return err
		}
		for _, d := range entries {
			rel := d.Name()
			if dir != "." {
				rel = dir + "/" + d.Name()
			}
			if d.Type()&fs.ModeSymlink != 0 || skip(rel, d.IsDir()) {
				continue
			}
			if d.IsDir() {
				if err := walk(rel); err != nil {
					return err
				}
			} else if d.Type().IsRegular() {
				out = append(out, rel)
			}
		}
		return nil
	}
	if err := walk("."); err != nil {
		return out, err
	}
	links, err := r.fs.Symlinks()
	if err != nil {
		return out, err
	}
	if len(links) > 0 {
		return out, &SymlinkError{Paths: links}
	}
	return out, nil
}

// Leftovers lists the temporary files of interrupted atomic writes.
func (r root) Leftovers() ([]string, error) { return r.fs.Leftovers() }

// SymlinkError names the symbolic links found in a campaign.
type SymlinkError struct{ Paths []string }

func (e *SymlinkError) Error() string {
	return fmt.Sprintf("%s: %v; tandem follows no links in a campaign", strings.Join(e.Paths, ", "), ErrSymlink)
}

func (e *SymlinkError) Unwrap() error { return ErrSymlink }

// removeLeftovers removes the files whose campaign-relative path starts
// with prefix and that no entry logs: what an interrupted step of the
// same kind left behind.
func (c *Campaign) removeLeftovers(prefix string) error {
	dir, base := path.Split(prefix)
	dir = strings.TrimSuffix(dir, "/")
	if dir == "" {
		dir = "."
	}
	if !c.root.Exists(dir) {
		return nil
	}
	ents, err := c.root.fs.ReadDir(dir)
	if err != nil {
		return err
	}
	files := c.State().Files
	for _, d := range ents {
		rel := path.Join(dir, d.Name())
		if _, logged := files[rel]; logged || !strings.HasPrefix(d.Name(), base) || !d.Type().IsRegular() {
			continue
		}
		if err := c.root.Remove(rel); err != nil {
			return err
		}
	}
	return nil
}
