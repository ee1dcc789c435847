//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package safefs

import (
	"fmt"
	"io/fs"
	"os"
	"path"
	"runtime"

	"golang.org/x/sys/unix"
)

// Batch creates many new files and makes them durable together: a step
// that writes a thousand tables pays for one flush instead of two fsyncs a
// file. Until [Batch.Sync] returns nil nothing the batch wrote may be
// relied on; after a crash before that, any of its files may be missing,
// empty or short. The caller therefore records the files (in the
// campaign: the ledger entry with their digests) only after Sync, and
// treats files found without a record as leftovers. Not safe for
// concurrent use.
type Batch struct {
	r     *Root
	files []string
}

// Batch starts a batch of new files beneath r.
func (r *Root) Batch() *Batch { return &Batch{r: r} }

// CreateExclusive creates rel with data and mode perm, failing with an
// error that matches [fs.ErrExist] if rel exists (a symbolic link
// included). Unlike [Root.CreateExclusive] the file is written in place
// and not synced: see [Batch].
func (b *Batch) CreateExclusive(rel string, data []byte, perm os.FileMode) error {
	const op = "create"
	dfd, base, err := b.r.parent(op, rel)
	if err != nil {
		return err
	}
	defer unix.Close(dfd)
	fd, err := openat(dfd, base, unix.O_WRONLY|unix.O_CREAT|unix.O_EXCL|unix.O_NOFOLLOW, uint32(perm.Perm()))
	if err == unix.EEXIST {
		return &Error{Op: op, Path: rel, Err: fmt.Errorf("refusing to overwrite it: %w", fs.ErrExist)}
	}
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	err = unix.Fchmod(fd, uint32(perm.Perm()))
	if err == nil {
		err = writeAll(fd, data)
	}
	if cerr := unix.Close(fd); err == nil {
		err = cerr
	}
	if err != nil {
		unix.Unlinkat(dfd, base, 0)
		return &Error{Op: op, Path: rel, Err: err}
	}
	b.files = append(b.files, rel)
	return nil
}

// Sync makes every file the batch created, and its directory entry,
// durable. On Linux it flushes the root's file system with one syncfs(2)
// (which reports write-back errors since Linux 5.8); elsewhere, or if
// syncfs fails, it fsyncs each file once and each of their directories
// once.
func (b *Batch) Sync() error {
	if len(b.files) == 0 {
		return nil
	}
	defer runtime.KeepAlive(b.r)
	if syncFS(b.r.fd) == nil {
		return nil
	}
	return b.syncEach()
}

// syncEach fsyncs each file of the batch once and each of their
// directories once.
func (b *Batch) syncEach() error {
	const op = "sync"
	dirs := map[string]bool{}
	for _, rel := range b.files {
		comps, err := split(op, rel)
		if err != nil {
			return err
		}
		fd, err := b.r.open(op, rel, comps, unix.O_RDONLY|unix.O_NOFOLLOW, 0)
		if err != nil {
			return err
		}
		err = fsync(fd)
		unix.Close(fd)
		if err != nil {
			return &Error{Op: op, Path: rel, Err: err}
		}
		dirs[path.Dir(rel)] = true
	}
	for dir := range dirs {
		fd := b.r.fd
		if dir != "." {
			comps, err := split(op, dir)
			if err != nil {
				return err
			}
			if fd, err = b.r.open(op, dir, comps, unix.O_RDONLY|unix.O_DIRECTORY|unix.O_NOFOLLOW, 0); err != nil {
				return err
			}
			defer unix.Close(fd)
		}
		if err := fsync(fd); err != nil && !ignorableSyncError(err) {
			return &Error{Op: op, Path: dir, Err: fmt.Errorf("syncing the directory: %w", err)}
		}
	}
	return nil
}
