package safefs

import (
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"strings"
	"unicode/utf8"
)

// TempPrefix starts the name of every temporary file the package writes.
// [Root.Leftovers] recognises files left by an interrupted write by it.
const TempPrefix = ".tandem-tmp-"

// Sentinel kinds of [Error], for use with [errors.Is].
var (
	// ErrSymlink: a component of the path is a symbolic link.
	ErrSymlink = errors.New("symbolic link refused inside the campaign")
	// ErrEscape: the path would leave the root ("..", an absolute path).
	ErrEscape = errors.New("path leaves the campaign folder")
	// ErrTooLarge: the file is larger than the limit given to ReadFile.
	ErrTooLarge = errors.New("file too large")
	// ErrInvalidPath: an empty component, ".", a backslash or a NUL byte.
	ErrInvalidPath = errors.New("invalid relative path")
	// ErrNotRegular: the file is not a regular file (a device, a FIFO, a
	// socket, or a directory where a file was expected).
	ErrNotRegular = errors.New("not a regular file")
)

// Error is the error of every operation of the package.
type Error struct {
	Op   string // the operation: "read", "write", "create", "append", "open", ...
	Path string // the relative path the operation was given
	// Link is, for ErrSymlink, the relative path of the component that is a
	// symbolic link (Path itself or one of its parents).
	Link string
	Kind error // ErrSymlink, ErrEscape, ErrTooLarge, ErrInvalidPath, ErrNotRegular or nil
	Err  error // the underlying cause, if any
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.Op)
	b.WriteString(" ")
	b.WriteString(quote(e.Path))
	b.WriteString(": ")
	switch e.Kind {
	case ErrSymlink:
		link := e.Link
		if link == "" {
			link = e.Path
		}
		fmt.Fprintf(&b, "%s is a symbolic link, and symbolic links are refused inside the campaign", quote(link))
	case nil:
		if e.Err != nil {
			b.WriteString(e.Err.Error())
		}
		return b.String()
	default:
		b.WriteString(e.Kind.Error())
	}
	if e.Err != nil {
		b.WriteString(": ")
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

// Unwrap returns the kind and the cause.
func (e *Error) Unwrap() []error {
	var errs []error
	if e.Kind != nil {
		errs = append(errs, e.Kind)
	}
	if e.Err != nil {
		errs = append(errs, e.Err)
	}
	return errs
}

// quote shows a path as is when it is plain, and Go-quoted when it holds
// spaces or characters that could mislead on a terminal.
func quote(p string) string {
	for _, r := range p {
		if r <= ' ' || r == 0x7f || r == '"' || (r >= 0x80 && r < 0xa0) || r == '\u202e' || r == '\u202d' || r == '\u2066' || r == '\u2067' || r == '\u2068' || r == '\u2069' || r == '\u202a' || r == '\u202b' || r == '\u202c' || r == '\ufeff' {
			return fmt.Sprintf("%q", p)
		}
	}
	return p
}

// split checks rel and returns its components; "." gives none.
//
// Rules: rel is "." or c₁/…/cₙ, n ≥ 1, with every cᵢ non-empty, not "." or
// "..", and free of '\\' and NUL; a leading '/' is an absolute path.
func split(op, rel string) ([]string, error) {
	bad := func(kind error, why string) error {
		return &Error{Op: op, Path: rel, Kind: kind, Err: errors.New(why)}
	}
	if rel == "." {
		return nil, nil
	}
	if rel == "" {
		return nil, bad(ErrInvalidPath, "empty path")
	}
	if rel[0] == '/' {
		return nil, bad(ErrEscape, "absolute path")
	}
	if i := strings.IndexAny(rel, "\\\x00"); i >= 0 {
		if rel[i] == 0 {
			return nil, bad(ErrInvalidPath, "NUL byte")
		}
		return nil, bad(ErrInvalidPath, "backslash")
	}
	if err := platformCheck(rel); err != nil {
		return nil, bad(ErrEscape, err.Error())
	}
	comps := strings.Split(rel, "/")
	for _, c := range comps {
		switch c {
		case "..":
			return nil, bad(ErrEscape, `".." component`)
		case "":
			return nil, bad(ErrInvalidPath, "empty component")
		case ".":
			return nil, bad(ErrInvalidPath, `"." component`)
		}
	}
	return comps, nil
}

// readLimited reads r, which holds size bytes by its metadata, refusing
// more than limit bytes. It never allocates more than limit+1 bytes, whatever
// size claims.
func readLimited(op, rel string, r io.Reader, size, limit int64) ([]byte, error) {
	if limit < 0 {
		limit = 0
	}
	tooLarge := func() error {
		return &Error{Op: op, Path: rel, Kind: ErrTooLarge, Err: fmt.Errorf("the limit is %d bytes", limit)}
	}
	if size > limit {
		return nil, tooLarge()
	}
	// The size is only a hint (files in /proc claim 0, a file can grow
	// while read): the buffer starts at no more than 64 MiB and doubles.
	n := min(max(size, 0), 64<<20)
	buf := make([]byte, 0, n+1)
	for {
		if int64(len(buf)) > limit {
			return nil, tooLarge()
		}
		if len(buf) == cap(buf) {
			grow := int64(cap(buf))
			if grow < 512 {
				grow = 512
			}
			if int64(cap(buf))+grow > limit+1 {
				grow = limit + 1 - int64(cap(buf))
			}
			nb := make([]byte, len(buf), int64(cap(buf))+grow)
			copy(nb, buf)
			buf = nb
		}
		m, err := r.Read(buf[len(buf):cap(buf)])
		buf = buf[:len(buf)+m]
		if err == io.EOF {
			if int64(len(buf)) > limit {
				return nil, tooLarge()
			}
			return buf, nil
		}
		if err != nil {
			return nil, &Error{Op: op, Path: rel, Err: err}
		}
	}
}

// join returns the relative path of comps[:n].
func join(comps []string, n int) string {
	if n == 0 {
		return "."
	}
	return strings.Join(comps[:n], "/")
}

// walkEntries is the shared tree walk of Symlinks and Leftovers: list
// returns the entries of a directory, and visit is called for each entry in
// lexical order, with its relative path.
func walkEntries(list func(rel string) ([]fs.DirEntry, error), visit func(rel string, d fs.DirEntry)) error {
	var walk func(rel string) error
	walk = func(rel string) error {
		ents, err := list(rel)
		if err != nil {
			return err
		}
		for _, d := range ents {
			p := d.Name()
			if rel != "." {
				p = rel + "/" + p
			}
			visit(p, d)
			if d.Type()&fs.ModeType == fs.ModeDir {
				if err := walk(p); err != nil {
					return err
				}
			}
		}
		return nil
	}
	return walk(".")
}

// Symlinks walks the whole tree beneath the root, without following any
// link, and returns the relative path of every symbolic link in it, in
// lexical order.
func (r *Root) Symlinks() ([]string, error) {
	var links []string
	err := walkEntries(r.ReadDir, func(rel string, d fs.DirEntry) {
		if d.Type()&fs.ModeSymlink != 0 {
			links = append(links, rel)
		}
	})
	return links, err
}

// Leftovers walks the whole tree beneath the root and returns the relative
// path of every file whose name starts with [TempPrefix]: temporary files
// of a write that was interrupted before its rename.
func (r *Root) Leftovers() ([]string, error) {
	var left []string
	err := walkEntries(r.ReadDir, func(rel string, d fs.DirEntry) {
		if strings.HasPrefix(d.Name(), TempPrefix) {
			left = append(left, rel)
		}
	})
	return left, err
}

// tempName returns a fresh temporary name for the file base.
// Long names are cut to 64 bytes at a character boundary, so that the
// temporary name stays within the 255-byte limit of common file systems.
func tempName(base string) string {
	if len(base) > 64 {
		cut := 64
		for cut > 0 && !utf8.RuneStart(base[cut]) {
			cut--
		}
		base = base[:cut]
	}
	var b [8]byte
	rand.Read(b[:])
	return TempPrefix + base + "-" + hex.EncodeToString(b[:])
}
