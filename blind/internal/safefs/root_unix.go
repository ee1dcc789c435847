//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

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
	"sync"
	"time"

	"golang.org/x/sys/unix"
)

// Root is an open campaign folder. Its methods are safe for concurrent use.
type Root struct {
	dir       string
	fd        int  // the root directory, opened O_DIRECTORY|O_NOFOLLOW
	walkOnly  bool // tests: resolve by the per-component walk only
	closeOnce sync.Once
	cleanup   runtime.Cleanup
}

// Open opens dir as the root. dir itself must be a directory and not a
// symbolic link; links in the path above it are followed as usual.
func Open(dir string) (*Root, error) {
	if dir == "" {
		return nil, &Error{Op: "open campaign folder", Path: dir, Kind: ErrInvalidPath, Err: errors.New("empty path")}
	}
	clean := filepath.Clean(dir)
	fd, err := retry(func() (int, error) {
		return unix.Open(clean, unix.O_RDONLY|unix.O_DIRECTORY|unix.O_NOFOLLOW|unix.O_CLOEXEC, 0)
	})
	if err != nil {
		var st unix.Stat_t
		if unix.Lstat(clean, &st) == nil && st.Mode&unix.S_IFMT == unix.S_IFLNK {
			return nil, &Error{Op: "open campaign folder", Path: dir, Link: dir, Kind: ErrSymlink}
		}
		if err == unix.ENOTDIR {
			return nil, &Error{Op: "open campaign folder", Path: dir, Kind: ErrNotRegular, Err: errors.New("not a directory")}
		}
		return nil, &Error{Op: "open campaign folder", Path: dir, Err: err}
	}
	r := &Root{dir: clean, fd: fd}
	r.cleanup = runtime.AddCleanup(r, func(fd int) { unix.Close(fd) }, fd)
	return r, nil
}

// Dir returns the root's path as given to Open, cleaned.
func (r *Root) Dir() string { return r.dir }

// Close releases the root's descriptor. It is also released when the Root
// is garbage collected.
func (r *Root) Close() error {
	var err error
	r.closeOnce.Do(func() {
		r.cleanup.Stop()
		err = unix.Close(r.fd)
	})
	return err
}

// retry repeats a system call interrupted by a signal.
func retry(call func() (int, error)) (int, error) {
	for {
		fd, err := call()
		if err != unix.EINTR {
			return fd, err
		}
	}
}

func openat(dfd int, name string, flags int, perm uint32) (int, error) {
	return retry(func() (int, error) { return unix.Openat(dfd, name, flags|unix.O_CLOEXEC, perm) })
}

// open resolves rel beneath the root and opens it with flags; the last
// component is never followed either.
func (r *Root) open(op, rel string, comps []string, flags int, perm uint32) (int, error) {
	defer runtime.KeepAlive(r)
	flags |= unix.O_NOFOLLOW | unix.O_CLOEXEC
	if len(comps) == 0 {
		fd, err := openat(r.fd, ".", flags, perm)
		if err != nil {
			return -1, &Error{Op: op, Path: rel, Err: err}
		}
		return fd, nil
	}
	if !r.walkOnly && haveOpenat2(r.fd) {
		fd, err := openat2(r.fd, strings.Join(comps, "/"), flags, perm)
		switch err {
		case nil:
			return fd, nil
		case unix.ENOSYS:
			// The kernel lost openat2 since the probe (a sandbox
			// changed); walk instead.
		case unix.EXDEV:
			return -1, &Error{Op: op, Path: rel, Kind: ErrEscape}
		default:
			// ELOOP names a link; with O_DIRECTORY a final link gives
			// ENOTDIR instead. Look for the link whatever the error.
			if link := r.findLink(comps); link != "" || err == unix.ELOOP {
				if link == "" {
					link = rel
				}
				return -1, &Error{Op: op, Path: rel, Link: link, Kind: ErrSymlink}
			}
			return -1, &Error{Op: op, Path: rel, Err: err}
		}
	}
	return r.walk(op, rel, comps, flags, perm)
}

// walk opens comps one component at a time from the root descriptor, every
// directory with O_DIRECTORY|O_NOFOLLOW and the last component with flags
// (which hold O_NOFOLLOW).
func (r *Root) walk(op, rel string, comps []string, flags int, perm uint32) (int, error) {
	dfd := r.fd
	release := func() {
		if dfd != r.fd {
			unix.Close(dfd)
		}
	}
	defer func() { release() }()
	for i, c := range comps {
		f, p := unix.O_RDONLY|unix.O_DIRECTORY|unix.O_NOFOLLOW, uint32(0)
		last := i == len(comps)-1
		if last {
			f, p = flags, perm
		}
		fd, err := openat(dfd, c, f, p)
		if err != nil {
			return -1, classify(op, rel, comps, i+1, dfd, err)
		}
		if last {
			return fd, nil
		}
		release()
		dfd = fd
	}
	panic("unreachable")
}

// classify turns the failure to open comps[n-1] in dfd into an *Error,
// naming the component when it is a symbolic link (Linux reports ELOOP or
// ENOTDIR, FreeBSD EMLINK, NetBSD EFTYPE, so the component is looked at
// rather than the error number).
func classify(op, rel string, comps []string, n, dfd int, err error) error {
	var st unix.Stat_t
	if unix.Fstatat(dfd, comps[n-1], &st, unix.AT_SYMLINK_NOFOLLOW) == nil && st.Mode&unix.S_IFMT == unix.S_IFLNK {
		return &Error{Op: op, Path: rel, Link: join(comps, n), Kind: ErrSymlink}
	}
	return &Error{Op: op, Path: rel, Err: err}
}

// findLink returns the first component of comps that is a symbolic link,
// or "" if none is (any more).
func (r *Root) findLink(comps []string) string {
	dfd := r.fd
	defer func() {
		if dfd != r.fd {
			unix.Close(dfd)
		}
	}()
	for i, c := range comps {
		var st unix.Stat_t
		if unix.Fstatat(dfd, c, &st, unix.AT_SYMLINK_NOFOLLOW) != nil {
			return ""
		}
		if st.Mode&unix.S_IFMT == unix.S_IFLNK {
			return join(comps, i+1)
		}
		if i == len(comps)-1 {
			return ""
		}
		fd, err := openat(dfd, c, unix.O_RDONLY|unix.O_DIRECTORY|unix.O_NOFOLLOW, 0)
		if err != nil {
			return ""
		}
		if dfd != r.fd {
			unix.Close(dfd)
		}
		dfd = fd
	}
	return ""
}

// parent opens the directory that holds rel and returns it with the last
// component. The root itself has no parent here.
func (r *Root) parent(op, rel string) (dfd int, base string, err error) {
	comps, err := split(op, rel)
	if err != nil {
		return -1, "", err
	}
	if len(comps) == 0 {
		return -1, "", &Error{Op: op, Path: rel, Kind: ErrInvalidPath, Err: errors.New("the campaign folder itself")}
	}
	n := len(comps) - 1
	dfd, err = r.open(op, rel, comps[:n], unix.O_RDONLY|unix.O_DIRECTORY, 0)
	if err != nil {
		if e, ok := err.(*Error); ok {
			e.Path = rel
		}
		return -1, "", err
	}
	return dfd, comps[n], nil
}

// lstatAt is fstatat without following base.
func lstatAt(dfd int, base string) (unix.Stat_t, error) {
	var st unix.Stat_t
	for {
		err := unix.Fstatat(dfd, base, &st, unix.AT_SYMLINK_NOFOLLOW)
		if err != unix.EINTR {
			return st, err
		}
	}
}

// openFile opens rel for reading and checks that it is a regular file (or,
// when dirOK, a directory). O_NONBLOCK keeps a FIFO from blocking the open;
// it is cleared again before the file is used.
func (r *Root) openFile(op, rel string, dirOK bool) (*os.File, unix.Stat_t, error) {
	var st unix.Stat_t
	comps, err := split(op, rel)
	if err != nil {
		return nil, st, err
	}
	fd, err := r.open(op, rel, comps, unix.O_RDONLY|unix.O_NONBLOCK, 0)
	if err != nil {
		return nil, st, err
	}
	if err := unix.Fstat(fd, &st); err != nil {
		unix.Close(fd)
		return nil, st, &Error{Op: op, Path: rel, Err: err}
	}
	t := st.Mode & unix.S_IFMT
	if t != unix.S_IFREG && !(dirOK && t == unix.S_IFDIR) {
		unix.Close(fd)
		return nil, st, &Error{Op: op, Path: rel, Kind: ErrNotRegular}
	}
	if err := unix.SetNonblock(fd, false); err != nil {
		unix.Close(fd)
		return nil, st, &Error{Op: op, Path: rel, Err: err}
	}
	return os.NewFile(uintptr(fd), filepath.Join(r.dir, filepath.FromSlash(rel))), st, nil
}

// ReadFile reads the regular file rel whole, refusing one larger than max
// bytes with [ErrTooLarge]; it never holds more than max+1 bytes.
func (r *Root) ReadFile(rel string, max int64) ([]byte, error) {
	f, st, err := r.openFile("read", rel, false)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return readLimited("read", rel, f, st.Size, max)
}

// Open opens the regular file or directory rel for reading.
func (r *Root) Open(rel string) (*os.File, error) {
	f, _, err := r.openFile("open", rel, true)
	return f, err
}

// writeAll writes data to fd whole, resuming after a short write.
func writeAll(fd int, data []byte) error {
	for len(data) > 0 {
		n, err := unix.Write(fd, data)
		if err == unix.EINTR {
			continue
		}
		if err != nil {
			return err
		}
		data = data[n:]
	}
	return nil
}

func fsync(fd int) error {
	for {
		err := unix.Fsync(fd)
		if err != unix.EINTR {
			return err
		}
	}
}

// writeTemp writes data to a fresh temporary file beside base in dfd, with
// mode perm, synced, and returns its name. On error nothing is left.
func writeTemp(dfd int, base string, data []byte, perm os.FileMode) (string, error) {
	tmp := tempName(base)
	fd, err := openat(dfd, tmp, unix.O_WRONLY|unix.O_CREAT|unix.O_EXCL|unix.O_NOFOLLOW, 0o600)
	if err != nil {
		return "", err
	}
	err = unix.Fchmod(fd, uint32(perm.Perm()))
	if err == nil {
		err = writeAll(fd, data)
	}
	if err == nil {
		err = fsync(fd)
	}
	if cerr := unix.Close(fd); err == nil {
		err = cerr
	}
	if err != nil {
		unix.Unlinkat(dfd, tmp, 0)
		return "", err
	}
	return tmp, nil
}

// checkTarget refuses to replace a symbolic link or a directory.
func checkTarget(op, rel string, dfd int, base string) error {
	st, err := lstatAt(dfd, base)
	if err != nil {
		return nil // absent (or unreadable: the write will say)
	}
	switch st.Mode & unix.S_IFMT {
	case unix.S_IFLNK:
		return &Error{Op: op, Path: rel, Link: rel, Kind: ErrSymlink}
	case unix.S_IFREG:
		return nil
	}
	return &Error{Op: op, Path: rel, Kind: ErrNotRegular}
}

// WriteAtomic replaces rel with data: a temporary file named with
// [TempPrefix] is written in the same directory with mode perm and synced,
// renamed over rel, and the directory is synced. The parent directory must
// exist. A symbolic link at rel is refused, not replaced.
func (r *Root) WriteAtomic(rel string, data []byte, perm os.FileMode) error {
	const op = "write"
	dfd, base, err := r.parent(op, rel)
	if err != nil {
		return err
	}
	defer unix.Close(dfd)
	if err := checkTarget(op, rel, dfd, base); err != nil {
		return err
	}
	tmp, err := writeTemp(dfd, base, data, perm)
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	if err := unix.Renameat(dfd, tmp, dfd, base); err != nil {
		unix.Unlinkat(dfd, tmp, 0)
		return &Error{Op: op, Path: rel, Err: err}
	}
	if err := fsync(dfd); err != nil && !ignorableSyncError(err) {
		return &Error{Op: op, Path: rel, Err: fmt.Errorf("syncing the directory: %w", err)}
	}
	return nil
}

// noHardLinks: errors of linkat(2) on a file system without hard links.
func noHardLinks(err error) bool {
	for _, e := range []error{unix.EPERM, unix.ENOTSUP, unix.EOPNOTSUPP, unix.EXDEV, unix.EMLINK, unix.ENOSYS} {
		if err == e {
			return true
		}
	}
	return false
}

// ignorableSyncError: some file systems cannot sync a directory; the
// rename is still atomic there.
func ignorableSyncError(err error) bool {
	return err == unix.EINVAL || err == unix.ENOTSUP || err == unix.EBADF
}

// CreateExclusive creates rel with data and mode perm, failing with an
// error that matches [fs.ErrExist] if rel exists (a symbolic link
// included). The content is written and synced under a temporary name and
// then hard-linked to rel, so rel appears whole or not at all; on a file
// system without hard links it is created with O_EXCL and written in place.
func (r *Root) CreateExclusive(rel string, data []byte, perm os.FileMode) error {
	const op = "create"
	dfd, base, err := r.parent(op, rel)
	if err != nil {
		return err
	}
	defer unix.Close(dfd)
	exists := func() error {
		return &Error{Op: op, Path: rel, Err: fmt.Errorf("refusing to overwrite it: %w", fs.ErrExist)}
	}
	if _, err := lstatAt(dfd, base); err == nil {
		return exists()
	}
	tmp, err := writeTemp(dfd, base, data, perm)
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	lerr := unix.Linkat(dfd, tmp, dfd, base, 0)
	unix.Unlinkat(dfd, tmp, 0)
	switch {
	case lerr == nil:
	case lerr == unix.EEXIST:
		return exists()
	case noHardLinks(lerr):
		fd, err := openat(dfd, base, unix.O_WRONLY|unix.O_CREAT|unix.O_EXCL|unix.O_NOFOLLOW, uint32(perm.Perm()))
		if err == unix.EEXIST {
			return exists()
		}
		if err != nil {
			return &Error{Op: op, Path: rel, Err: err}
		}
		err = unix.Fchmod(fd, uint32(perm.Perm()))
		if err == nil {
			err = writeAll(fd, data)
		}
		if err == nil {
			err = fsync(fd)
		}
		if cerr := unix.Close(fd); err == nil {
			err = cerr
		}
		if err != nil {
			unix.Unlinkat(dfd, base, 0)
			return &Error{Op: op, Path: rel, Err: err}
		}
	default:
		return &Error{Op: op, Path: rel, Err: lerr}
	}
	if err := fsync(dfd); err != nil && !ignorableSyncError(err) {
		return &Error{Op: op, Path: rel, Err: fmt.Errorf("syncing the directory: %w", err)}
	}
	return nil
}

// Append adds data at the end of rel, creating it (mode 0644) if needed,
// with one write(2) on a descriptor opened O_APPEND, then fsync: appends
// from several goroutines or processes do not interleave within one call
// on a local file system. A new file's directory is synced too.
func (r *Root) Append(rel string, data []byte) error {
	const op = "append"
	comps, err := split(op, rel)
	if err != nil {
		return err
	}
	created := false
	fd, err := r.open(op, rel, comps, unix.O_WRONLY|unix.O_APPEND, 0)
	if err != nil && errors.Is(err, fs.ErrNotExist) {
		created = true
		fd, err = r.open(op, rel, comps, unix.O_WRONLY|unix.O_APPEND|unix.O_CREAT, 0o644)
	}
	if err != nil {
		return err
	}
	defer unix.Close(fd)
	var st unix.Stat_t
	if err := unix.Fstat(fd, &st); err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	if st.Mode&unix.S_IFMT != unix.S_IFREG {
		return &Error{Op: op, Path: rel, Kind: ErrNotRegular}
	}
	var n int
	for {
		n, err = unix.Write(fd, data)
		if err != unix.EINTR {
			break
		}
	}
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	if n != len(data) {
		return &Error{Op: op, Path: rel, Err: fmt.Errorf("short write: %d of %d bytes", n, len(data))}
	}
	if err := fsync(fd); err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	if created {
		dfd, _, err := r.parent(op, rel)
		if err != nil {
			return err
		}
		defer unix.Close(dfd)
		if err := fsync(dfd); err != nil && !ignorableSyncError(err) {
			return &Error{Op: op, Path: rel, Err: fmt.Errorf("syncing the directory: %w", err)}
		}
	}
	return nil
}

// MkdirAll creates rel and every missing parent with mode perm (before the
// umask), refusing a symbolic link at any component.
func (r *Root) MkdirAll(rel string, perm os.FileMode) error {
	const op = "mkdir"
	comps, err := split(op, rel)
	if err != nil {
		return err
	}
	defer runtime.KeepAlive(r)
	dfd := r.fd
	defer func() {
		if dfd != r.fd {
			unix.Close(dfd)
		}
	}()
	for i, c := range comps {
		made := false
		if err := unix.Mkdirat(dfd, c, uint32(perm.Perm())); err == nil {
			made = true
		} else if err != unix.EEXIST {
			return classify(op, rel, comps, i+1, dfd, err)
		}
		fd, err := openat(dfd, c, unix.O_RDONLY|unix.O_DIRECTORY|unix.O_NOFOLLOW, 0)
		if err != nil {
			return classify(op, rel, comps, i+1, dfd, err)
		}
		if made {
			if err := fsync(dfd); err != nil && !ignorableSyncError(err) {
				unix.Close(fd)
				return &Error{Op: op, Path: rel, Err: err}
			}
		}
		if dfd != r.fd {
			unix.Close(dfd)
		}
		dfd = fd
	}
	return nil
}

// Lock takes an exclusive flock(2) on the lock file rel, creating it (mode
// 0644) without following a symbolic link: a lock path that is a link,
// dangling or not, is refused. It blocks until the lock is free. The
// returned function releases it.
func (r *Root) Lock(rel string) (unlock func() error, err error) {
	const op = "lock"
	comps, err := split(op, rel)
	if err != nil {
		return nil, err
	}
	fd, err := r.open(op, rel, comps, unix.O_RDWR|unix.O_CREAT, 0o644)
	if err != nil {
		return nil, err
	}
	var st unix.Stat_t
	if err := unix.Fstat(fd, &st); err != nil || st.Mode&unix.S_IFMT != unix.S_IFREG {
		unix.Close(fd)
		if err != nil {
			return nil, &Error{Op: op, Path: rel, Err: err}
		}
		return nil, &Error{Op: op, Path: rel, Kind: ErrNotRegular}
	}
	for {
		err = unix.Flock(fd, unix.LOCK_EX)
		if err != unix.EINTR {
			break
		}
	}
	if err != nil {
		unix.Close(fd)
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	var once sync.Once
	return func() error {
		var err error
		once.Do(func() {
			unix.Flock(fd, unix.LOCK_UN)
			err = unix.Close(fd)
		})
		return err
	}, nil
}

// Remove removes the file or empty directory rel. A symbolic link is
// refused like everywhere else.
func (r *Root) Remove(rel string) error {
	const op = "remove"
	dfd, base, err := r.parent(op, rel)
	if err != nil {
		return err
	}
	defer unix.Close(dfd)
	st, err := lstatAt(dfd, base)
	if err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	flags := 0
	switch st.Mode & unix.S_IFMT {
	case unix.S_IFLNK:
		return &Error{Op: op, Path: rel, Link: rel, Kind: ErrSymlink}
	case unix.S_IFDIR:
		flags = unix.AT_REMOVEDIR
	}
	if err := unix.Unlinkat(dfd, base, flags); err != nil {
		return &Error{Op: op, Path: rel, Err: err}
	}
	return nil
}

// Stat describes rel without following it (lstat): a symbolic link as the
// last component is described, not refused; one above it is refused.
func (r *Root) Stat(rel string) (fs.FileInfo, error) {
	const op = "stat"
	comps, err := split(op, rel)
	if err != nil {
		return nil, err
	}
	if len(comps) == 0 {
		var st unix.Stat_t
		err := unix.Fstat(r.fd, &st)
		runtime.KeepAlive(r)
		if err != nil {
			return nil, &Error{Op: op, Path: rel, Err: err}
		}
		return &fileInfo{name: filepath.Base(r.dir), st: st}, nil
	}
	dfd, base, err := r.parent(op, rel)
	if err != nil {
		return nil, err
	}
	defer unix.Close(dfd)
	st, err := lstatAt(dfd, base)
	if err != nil {
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	return &fileInfo{name: base, st: st}, nil
}

// ReadDir lists the directory rel, sorted by name. Entries are not
// followed: a symbolic link is listed with type [fs.ModeSymlink].
func (r *Root) ReadDir(rel string) ([]fs.DirEntry, error) {
	const op = "read directory"
	comps, err := split(op, rel)
	if err != nil {
		return nil, err
	}
	fd, err := r.open(op, rel, comps, unix.O_RDONLY|unix.O_DIRECTORY, 0)
	if err != nil {
		return nil, err
	}
	f := os.NewFile(uintptr(fd), filepath.Join(r.dir, filepath.FromSlash(rel)))
	defer f.Close()
	ents, err := f.ReadDir(-1)
	if err != nil {
		return nil, &Error{Op: op, Path: rel, Err: err}
	}
	slices.SortFunc(ents, func(a, b fs.DirEntry) int { return strings.Compare(a.Name(), b.Name()) })
	return ents, nil
}

// fileInfo is an fs.FileInfo from fstatat(2).
type fileInfo struct {
	name string
	st   unix.Stat_t
}

func (fi *fileInfo) Name() string       { return fi.name }
func (fi *fileInfo) Size() int64        { return fi.st.Size }
func (fi *fileInfo) ModTime() time.Time { return time.Unix(fi.st.Mtim.Unix()) }
func (fi *fileInfo) IsDir() bool        { return fi.Mode().IsDir() }
func (fi *fileInfo) Sys() any           { return &fi.st }
func (fi *fileInfo) Mode() fs.FileMode {
	m := uint32(fi.st.Mode)
	mode := fs.FileMode(m & 0o777)
	switch m & unix.S_IFMT {
	case unix.S_IFDIR:
		mode |= fs.ModeDir
	case unix.S_IFLNK:
		mode |= fs.ModeSymlink
	case unix.S_IFIFO:
		mode |= fs.ModeNamedPipe
	case unix.S_IFSOCK:
		mode |= fs.ModeSocket
	case unix.S_IFCHR:
		mode |= fs.ModeDevice | fs.ModeCharDevice
	case unix.S_IFBLK:
		mode |= fs.ModeDevice
	}
	if m&unix.S_ISUID != 0 {
		mode |= fs.ModeSetuid
	}
	if m&unix.S_ISGID != 0 {
		mode |= fs.ModeSetgid
	}
	if m&unix.S_ISVTX != 0 {
		mode |= fs.ModeSticky
	}
	return mode
}

func platformCheck(string) error { return nil }
