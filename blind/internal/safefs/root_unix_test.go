//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package safefs

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"golang.org/x/sys/unix"
)

// modes runs f once with the platform's resolution (openat2 on Linux) and
// once with the per-component O_NOFOLLOW walk, the fallback of old kernels.
func modes(t *testing.T, f func(t *testing.T, open func(dir string) *Root)) {
	for _, walk := range []bool{false, true} {
		name := "openat2"
		if walk {
			name = "walk"
		}
		t.Run(name, func(t *testing.T) {
			f(t, func(dir string) *Root {
				t.Helper()
				r, err := Open(dir)
				if err != nil {
					t.Fatal(err)
				}
				r.walkOnly = walk
				t.Cleanup(func() { r.Close() })
				return r
			})
		})
	}
}

func must(t *testing.T, err error) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
}

// tree builds a campaign folder with symbolic links at every level and an
// outside folder they point into. It returns both paths.
//
//	camp/a/b/c.txt        regular file "inside"
//	camp/la       -> a                 directory link, level 1
//	camp/a/lb     -> b                 directory link, level 2
//	camp/a/b/lc   -> c.txt             file link, level 3
//	camp/dangling -> ../out/none       dangling
//	camp/out      -> ../out            leaves the folder
//	camp/abs      -> /…/out/secret     absolute
//	out/secret                         "outside"
func tree(t *testing.T) (camp, out string) {
	base := t.TempDir()
	camp, out = filepath.Join(base, "camp"), filepath.Join(base, "out")
	must(t, os.MkdirAll(filepath.Join(camp, "a", "b"), 0o755))
	must(t, os.MkdirAll(out, 0o755))
	must(t, os.WriteFile(filepath.Join(camp, "a", "b", "c.txt"), []byte("inside"), 0o644))
	must(t, os.WriteFile(filepath.Join(out, "secret"), []byte("outside"), 0o644))
	for link, target := range map[string]string{
		"la":       "a",
		"a/lb":     "b",
		"a/b/lc":   "c.txt",
		"dangling": "../out/none",
		"out":      "../out",
		"abs":      filepath.Join(out, "secret"),
	} {
		must(t, os.Symlink(target, filepath.Join(camp, filepath.FromSlash(link))))
	}
	return camp, out
}

// listing returns every name beneath dir, to show nothing was added.
func listing(t *testing.T, dir string) []string {
	t.Helper()
	var names []string
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		names = append(names, p)
		return nil
	})
	return names
}

func TestSymlinksRefusedEverywhere(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		camp, out := tree(t)
		r := open(camp)
		before := listing(t, out)
		secret, _ := os.ReadFile(filepath.Join(out, "secret"))
		cases := []struct{ rel, link string }{
			{"la/b/c.txt", "la"},
			{"a/lb/c.txt", "a/lb"},
			{"a/b/lc", "a/b/lc"},
			{"dangling", "dangling"},
			{"out/secret", "out"},
			{"out/new", "out"},
			{"abs", "abs"},
			{"la/new", "la"},
		}
		ops := map[string]func(rel string) error{
			"ReadFile": func(rel string) error { _, err := r.ReadFile(rel, 1<<20); return err },
			"Open": func(rel string) error {
				f, err := r.Open(rel)
				if f != nil {
					f.Close()
				}
				return err
			},
			"WriteAtomic":     func(rel string) error { return r.WriteAtomic(rel, []byte("x"), 0o644) },
			"CreateExclusive": func(rel string) error { return r.CreateExclusive(rel, []byte("x"), 0o644) },
			"Append":          func(rel string) error { return r.Append(rel, []byte("x\n")) },
			"MkdirAll":        func(rel string) error { return r.MkdirAll(rel+"/sub", 0o755) },
			"Lock": func(rel string) error {
				unlock, err := r.Lock(rel)
				if unlock != nil {
					unlock()
				}
				return err
			},
			"Remove":  func(rel string) error { return r.Remove(rel) },
			"ReadDir": func(rel string) error { _, err := r.ReadDir(rel); return err },
			"Stat":    func(rel string) error { _, err := r.Stat(rel + "/x"); return err },
		}
		for name, op := range ops {
			for _, c := range cases {
				err := op(c.rel)
				if name == "CreateExclusive" && errors.Is(err, fs.ErrExist) && c.rel == c.link {
					// The link itself exists, and is neither followed nor
					// replaced: refused either way.
					continue
				}
				if !errors.Is(err, ErrSymlink) {
					t.Errorf("%s(%q): err = %v, want ErrSymlink", name, c.rel, err)
					continue
				}
				var e *Error
				if !errors.As(err, &e) || e.Link != c.link || !strings.Contains(err.Error(), c.link+" is a symbolic link") {
					t.Errorf("%s(%q): %v does not name the link %s", name, c.rel, err, c.link)
				}
			}
		}
		if after := listing(t, out); !slices.Equal(before, after) {
			t.Errorf("outside folder changed: %q -> %q", before, after)
		}
		if got, _ := os.ReadFile(filepath.Join(out, "secret")); !bytes.Equal(got, secret) {
			t.Errorf("outside file changed to %q", got)
		}
		// The real path still works, and Stat describes a final link.
		if b, err := r.ReadFile("a/b/c.txt", 100); err != nil || string(b) != "inside" {
			t.Errorf("ReadFile(a/b/c.txt) = %q, %v", b, err)
		}
		fi, err := r.Stat("a/b/lc")
		if err != nil || fi.Mode()&fs.ModeSymlink == 0 || fi.Name() != "lc" {
			t.Errorf("Stat(a/b/lc) = %v, %v; want a symlink described", fi, err)
		}
	})
}

func TestDanglingLockRefused(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		camp, out := tree(t)
		must(t, os.Symlink("../out/lockfile", filepath.Join(camp, ".tandem.lock")))
		r := open(camp)
		unlock, err := r.Lock(".tandem.lock")
		if !errors.Is(err, ErrSymlink) || unlock != nil {
			t.Fatalf("Lock through a dangling link: %v", err)
		}
		if _, err := os.Lstat(filepath.Join(out, "lockfile")); !errors.Is(err, fs.ErrNotExist) {
			t.Fatalf("the lock file was created outside the folder: %v", err)
		}
	})
}

func TestLockExcludes(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		r := open(t.TempDir())
		unlock, err := r.Lock(".tandem.lock")
		must(t, err)
		got := make(chan time.Time)
		go func() {
			u, err := r.Lock(".tandem.lock")
			if err == nil {
				got <- time.Now()
				u()
			}
			close(got)
		}()
		time.Sleep(50 * time.Millisecond)
		released := time.Now()
		must(t, unlock())
		if at, ok := <-got; !ok || at.Before(released) {
			t.Fatalf("second Lock did not wait for the first (ok=%v)", ok)
		}
		must(t, unlock()) // idempotent
	})
}

func TestOpenRoot(t *testing.T) {
	camp, _ := tree(t)
	base := filepath.Dir(camp)
	must(t, os.Symlink("camp", filepath.Join(base, "link")))
	if _, err := Open(filepath.Join(base, "link")); !errors.Is(err, ErrSymlink) {
		t.Errorf("Open(link to folder): %v, want ErrSymlink", err)
	}
	if _, err := Open(filepath.Join(base, "link") + "/"); !errors.Is(err, ErrSymlink) {
		t.Errorf("Open(link/): %v, want ErrSymlink", err)
	}
	if _, err := Open(filepath.Join(camp, "a", "b", "c.txt")); err == nil {
		t.Errorf("Open(a file) succeeded")
	}
	if _, err := Open(filepath.Join(base, "none")); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("Open(missing): %v", err)
	}
	// A link above the root is the user's business.
	r, err := Open(filepath.Join(base, "link", "a"))
	if err != nil {
		t.Fatalf("Open beneath a linked parent: %v", err)
	}
	defer r.Close()
	if b, err := r.ReadFile("b/c.txt", 10); err != nil || string(b) != "inside" {
		t.Errorf("ReadFile = %q, %v", b, err)
	}
}

func TestEscapesRefused(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		camp, _ := tree(t)
		r := open(camp)
		for _, rel := range []string{"..", "../out/secret", "a/../../out/secret", "/etc/passwd", filepath.Join(filepath.Dir(camp), "out", "secret")} {
			if _, err := r.ReadFile(rel, 100); !errors.Is(err, ErrEscape) {
				t.Errorf("ReadFile(%q): %v, want ErrEscape", rel, err)
			}
			if err := r.WriteAtomic(rel, nil, 0o644); !errors.Is(err, ErrEscape) {
				t.Errorf("WriteAtomic(%q): %v, want ErrEscape", rel, err)
			}
		}
		for _, rel := range []string{"", "a//b", "a/", "./a"} {
			if _, err := r.Stat(rel); !errors.Is(err, ErrInvalidPath) {
				t.Errorf("Stat(%q): %v, want ErrInvalidPath", rel, err)
			}
		}
	})
}

func TestReadFileLimit(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		dir := t.TempDir()
		must(t, os.WriteFile(filepath.Join(dir, "t.csv"), bytes.Repeat([]byte("x"), 100), 0o644))
		r := open(dir)
		if b, err := r.ReadFile("t.csv", 100); err != nil || len(b) != 100 {
			t.Errorf("ReadFile at the limit: %d bytes, %v", len(b), err)
		}
		_, err := r.ReadFile("t.csv", 99)
		if !errors.Is(err, ErrTooLarge) || !strings.Contains(err.Error(), "t.csv") || !strings.Contains(err.Error(), "99 bytes") {
			t.Errorf("ReadFile over the limit: %v", err)
		}
		if b, err := r.ReadFile("t.csv", -1); !errors.Is(err, ErrTooLarge) || b != nil {
			t.Errorf("negative limit: %v", err)
		}
		// A FIFO is refused without blocking the open.
		must(t, unix.Mkfifo(filepath.Join(dir, "fifo"), 0o644))
		if _, err := r.ReadFile("fifo", 100); !errors.Is(err, ErrNotRegular) {
			t.Errorf("ReadFile(fifo): %v, want ErrNotRegular", err)
		}
		if _, err := r.ReadFile(".", 100); !errors.Is(err, ErrNotRegular) {
			t.Errorf("ReadFile(.): %v, want ErrNotRegular", err)
		}
		if _, err := r.ReadFile("none", 100); !errors.Is(err, fs.ErrNotExist) {
			t.Errorf("ReadFile(none): %v", err)
		}
	})
}

// TestReadFileDevice: a device that never ends (/dev/zero) cannot be
// read, even through a hard-to-spot path: it is not a regular file. A
// symbolic link to it is refused as a link (TestSymlinksRefusedEverywhere).
func TestReadLimitedStream(t *testing.T) {
	// A reader that never ends, like /dev/zero: at most max+1 bytes are
	// taken from it.
	var n int64
	r := readerFunc(func(p []byte) (int, error) {
		n += int64(len(p))
		return len(p), nil
	})
	_, err := readLimited("read", "z.json", r, 0, 1<<20)
	if !errors.Is(err, ErrTooLarge) || n > 1<<20+1 {
		t.Fatalf("endless reader: %v after %d bytes", err, n)
	}
	// A size claim above max is refused before reading.
	b, err := readLimited("read", "s", iotestHalf(strings.NewReader("hello world")), 1<<40, 100)
	if !errors.Is(err, ErrTooLarge) {
		t.Fatalf("size claim above the limit: %q, %v", b, err)
	}
	// A huge claim under a huge limit does not allocate the claim.
	b, err = readLimited("read", "s", iotestHalf(strings.NewReader("hello world")), 1<<40, 1<<50)
	if err != nil || string(b) != "hello world" {
		t.Fatalf("huge size claim: %q, %v", b, err)
	}
	b, err = readLimited("read", "s", iotestHalf(strings.NewReader("hello world")), 3, 100)
	if err != nil || string(b) != "hello world" {
		t.Fatalf("short size claim: %q, %v", b, err)
	}
}

type readerFunc func([]byte) (int, error)

func (f readerFunc) Read(p []byte) (int, error) { return f(p) }

// iotestHalf reads at most one byte less than asked, like
// testing/iotest.HalfReader but always at least one byte.
func iotestHalf(r io.Reader) io.Reader {
	return readerFunc(func(p []byte) (int, error) {
		if len(p) > 1 {
			p = p[:len(p)/2]
		}
		return r.Read(p)
	})
}

func TestWriteAtomic(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		dir := t.TempDir()
		r := open(dir)
		must(t, r.MkdirAll("reports/html", 0o755))
		must(t, r.WriteAtomic("reports/final.txt", []byte("one"), 0o600))
		must(t, r.WriteAtomic("reports/final.txt", []byte("two"), 0o640))
		b, err := os.ReadFile(filepath.Join(dir, "reports", "final.txt"))
		if err != nil || string(b) != "two" {
			t.Fatalf("content %q, %v", b, err)
		}
		fi, _ := os.Stat(filepath.Join(dir, "reports", "final.txt"))
		if fi.Mode().Perm() != 0o640 {
			t.Errorf("mode %v, want 0640", fi.Mode().Perm())
		}
		if err := r.WriteAtomic("missing/x", nil, 0o644); !errors.Is(err, fs.ErrNotExist) {
			t.Errorf("missing parent: %v", err)
		}
		if err := r.WriteAtomic("reports/html", nil, 0o644); !errors.Is(err, ErrNotRegular) {
			t.Errorf("over a directory: %v", err)
		}
		if err := r.WriteAtomic(".", nil, 0o644); !errors.Is(err, ErrInvalidPath) {
			t.Errorf("the root itself: %v", err)
		}
		// A name long enough that the temporary name must be cut.
		long := strings.Repeat("é", 120) // 240 bytes
		must(t, r.WriteAtomic(long, []byte("x"), 0o644))
		left, err := r.Leftovers()
		if err != nil || len(left) != 0 {
			t.Errorf("leftovers after clean writes: %q, %v", left, err)
		}
	})
}

func TestCreateExclusive(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		camp, out := tree(t)
		r := open(camp)
		must(t, r.CreateExclusive("key", []byte("k1"), 0o600))
		err := r.CreateExclusive("key", []byte("k2"), 0o600)
		if !errors.Is(err, fs.ErrExist) || !strings.Contains(err.Error(), "key") {
			t.Errorf("second create: %v", err)
		}
		if b, _ := os.ReadFile(filepath.Join(camp, "key")); string(b) != "k1" {
			t.Errorf("overwritten: %q", b)
		}
		fi, _ := os.Stat(filepath.Join(camp, "key"))
		if fi.Mode().Perm() != 0o600 {
			t.Errorf("mode %v", fi.Mode().Perm())
		}
		// A dangling link at the name is not followed.
		if err := r.CreateExclusive("dangling", []byte("x"), 0o600); err == nil {
			t.Errorf("created through a dangling link")
		}
		if _, err := os.Lstat(filepath.Join(out, "none")); err == nil {
			t.Errorf("file created outside")
		}
		if left, _ := r.Leftovers(); len(left) != 0 {
			t.Errorf("leftovers: %q", left)
		}
	})
}

func TestTreeQueries(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		camp, _ := tree(t)
		r := open(camp)
		links, err := r.Symlinks()
		want := []string{"a/b/lc", "a/lb", "abs", "dangling", "la", "out"}
		if err != nil || !slices.Equal(links, want) {
			t.Errorf("Symlinks() = %q, %v; want %q", links, err, want)
		}
		must(t, os.WriteFile(filepath.Join(camp, "a", TempPrefix+"ledger-0011"), nil, 0o600))
		must(t, os.WriteFile(filepath.Join(camp, TempPrefix+"x"), nil, 0o600))
		left, err := r.Leftovers()
		if want := []string{TempPrefix + "x", "a/" + TempPrefix + "ledger-0011"}; err != nil || !slices.Equal(left, want) {
			t.Errorf("Leftovers() = %q, %v; want %q", left, err, want)
		}
		ents, err := r.ReadDir("a")
		var names []string
		for _, e := range ents {
			names = append(names, e.Name())
		}
		if want := []string{TempPrefix + "ledger-0011", "b", "lb"}; err != nil || !slices.Equal(names, want) {
			t.Errorf("ReadDir(a) = %q, %v", names, err)
		}
		fi, err := r.Stat(".")
		if err != nil || !fi.IsDir() || fi.Name() != "camp" {
			t.Errorf("Stat(.) = %v, %v", fi, err)
		}
		fi, err = r.Stat("a/b/c.txt")
		if err != nil || fi.Size() != 6 || !fi.Mode().IsRegular() || fi.Mode().Perm() != 0o644 || time.Since(fi.ModTime()) > time.Hour {
			t.Errorf("Stat(a/b/c.txt) = %v, %v", fi, err)
		}
		must(t, r.Remove(TempPrefix+"x"))
		must(t, r.MkdirAll("e/f", 0o755))
		must(t, r.Remove("e/f"))
		if _, err := os.Stat(filepath.Join(camp, "e", "f")); !errors.Is(err, fs.ErrNotExist) {
			t.Errorf("Remove(e/f) left it: %v", err)
		}
		if err := r.Remove("a"); err == nil {
			t.Errorf("removed a non-empty directory")
		}
		f, err := r.Open("a/b")
		must(t, err)
		f.Close()
	})
}

// TestSwapRace swaps a directory for a symbolic link to the outside, back
// and forth with rename(2), while reads and writes go through it. Nothing
// may ever be read from or written to the outside (best effort: the race
// is hit often, not on every run).
func TestSwapRace(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		base := t.TempDir()
		camp, out := filepath.Join(base, "camp"), filepath.Join(base, "out")
		must(t, os.MkdirAll(filepath.Join(camp, "real"), 0o755))
		must(t, os.MkdirAll(out, 0o755))
		must(t, os.WriteFile(filepath.Join(camp, "real", "f"), []byte("inside"), 0o644))
		must(t, os.WriteFile(filepath.Join(out, "f"), []byte("outside"), 0o644))
		must(t, os.Symlink(out, filepath.Join(camp, "link")))
		r := open(camp)
		stop := make(chan struct{})
		var wg sync.WaitGroup
		wg.Add(1)
		go func() {
			defer wg.Done()
			d := filepath.Join(camp, "d")
			for i := 0; ; i++ {
				select {
				case <-stop:
					return
				default:
				}
				src := "real"
				if i%2 == 1 {
					src = "link"
				}
				os.Rename(filepath.Join(camp, src), d)
				os.Rename(d, filepath.Join(camp, src))
			}
		}()
		var ok, refused int
		for i := 0; i < 3000; i++ {
			b, err := r.ReadFile("d/f", 100)
			switch {
			case err == nil && string(b) == "inside":
				ok++
			case err == nil:
				t.Fatalf("read %q through a swapped link", b)
			case errors.Is(err, ErrSymlink):
				refused++
			default:
				// Not found, or not a directory when the link was
				// swapped back before the error was classified.
			}
			r.Append("d/g", []byte("x\n"))
			r.WriteAtomic("d/h", []byte("x"), 0o644)
		}
		close(stop)
		wg.Wait()
		if names := listing(t, out); len(names) != 2 {
			t.Fatalf("written outside: %q", names)
		}
		t.Logf("3000 reads during swaps: %d read inside, %d refused as links", ok, refused)
	})
}

// appendLines appends count lines "id i <padding>\n" of varied length to
// rel, one Append call per line.
func appendLines(r *Root, rel, id string, count int) error {
	rng := rand.New(rand.NewPCG(uint64(len(id)), 7))
	for i := range count {
		pad := strings.Repeat("#", 1+rng.IntN(6000))
		if err := r.Append(rel, fmt.Appendf(nil, "%s %d %d %s\n", id, i, len(pad), pad)); err != nil {
			return err
		}
	}
	return nil
}

// checkLines verifies that every line of file is whole and that each
// writer's lines all arrived, in its own order.
func checkLines(t *testing.T, file string, writers []string, count int) {
	t.Helper()
	f, err := os.Open(file)
	must(t, err)
	defer f.Close()
	next := map[string]int{}
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 1<<20)
	lines := 0
	for sc.Scan() {
		lines++
		fields := strings.Fields(sc.Text())
		if len(fields) != 4 {
			t.Fatalf("line %d torn: %.80q", lines, sc.Text())
		}
		i, _ := strconv.Atoi(fields[1])
		n, _ := strconv.Atoi(fields[2])
		if n != len(fields[3]) || strings.Trim(fields[3], "#") != "" || i != next[fields[0]] {
			t.Fatalf("line %d torn or out of order: %.80q", lines, sc.Text())
		}
		next[fields[0]]++
	}
	must(t, sc.Err())
	for _, w := range writers {
		if next[w] != count {
			t.Errorf("writer %s: %d lines, want %d", w, next[w], count)
		}
	}
}

func TestAppendGoroutines(t *testing.T) {
	modes(t, func(t *testing.T, open func(string) *Root) {
		dir := t.TempDir()
		r := open(dir)
		const count = 150
		var writers []string
		var wg sync.WaitGroup
		errs := make(chan error, 8)
		for g := range 8 {
			id := fmt.Sprintf("g%d", g)
			writers = append(writers, id)
			wg.Go(func() { errs <- appendLines(r, "ledger", id, count) })
		}
		wg.Wait()
		close(errs)
		for err := range errs {
			must(t, err)
		}
		checkLines(t, filepath.Join(dir, "ledger"), writers, count)
	})
}

// TestAppendProcesses re-executes the test binary as several writers.
func TestAppendProcesses(t *testing.T) {
	if dir := os.Getenv("SAFEFS_APPEND_DIR"); dir != "" {
		r, err := Open(dir)
		if err == nil {
			r.walkOnly = os.Getenv("SAFEFS_WALK") == "1"
			err = appendLines(r, "ledger", os.Getenv("SAFEFS_APPEND_ID"), 150)
		}
		if err != nil {
			t.Fatal(err)
		}
		return
	}
	for _, walk := range []string{"0", "1"} {
		dir := t.TempDir()
		var cmds []*exec.Cmd
		var writers []string
		for p := range 4 {
			id := fmt.Sprintf("p%d", p)
			writers = append(writers, id)
			cmd := exec.Command(os.Args[0], "-test.run=^TestAppendProcesses$")
			cmd.Env = append(os.Environ(), "SAFEFS_APPEND_DIR="+dir, "SAFEFS_APPEND_ID="+id, "SAFEFS_WALK="+walk)
			must(t, cmd.Start())
			cmds = append(cmds, cmd)
		}
		for _, c := range cmds {
			if err := c.Wait(); err != nil {
				t.Fatalf("writer: %v", err)
			}
		}
		checkLines(t, filepath.Join(dir, "ledger"), writers, 150)
	}
}

// TestCrashLeavesRecognisableTemp kills a child process (SIGKILL) while it
// rewrites a file with WriteAtomic in a loop. After every kill the target
// holds one whole version, and any other file is a temporary file with
// TempPrefix that Leftovers lists.
func TestCrashLeavesRecognisableTemp(t *testing.T) {
	if dir := os.Getenv("SAFEFS_CRASH_DIR"); dir != "" {
		r, err := Open(dir)
		if err != nil {
			t.Fatal(err)
		}
		os.Stdout.WriteString("ready\n")
		for i := 0; ; i++ {
			data := bytes.Repeat([]byte{'a' + byte(i%26)}, 4<<20)
			if err := r.WriteAtomic("sealed.age", data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	dir := t.TempDir()
	r, err := Open(dir)
	must(t, err)
	defer r.Close()
	must(t, r.WriteAtomic("sealed.age", bytes.Repeat([]byte{'z'}, 4<<20), 0o644))
	seen := 0
	for try := 0; try < 30 && seen < 3; try++ {
		cmd := exec.Command(os.Args[0], "-test.run=^TestCrashLeavesRecognisableTemp$")
		cmd.Env = append(os.Environ(), "SAFEFS_CRASH_DIR="+dir)
		stdout, err := cmd.StdoutPipe()
		must(t, err)
		must(t, cmd.Start())
		bufio.NewReader(stdout).ReadString('\n')
		// Wait until a write is under way (a loaded machine can starve
		// the child for a long time), then kill it a moment later.
		for deadline := time.Now().Add(20 * time.Second); time.Now().Before(deadline); time.Sleep(time.Millisecond) {
			if left, _ := r.Leftovers(); len(left) > 0 {
				break
			}
		}
		time.Sleep(time.Duration(rand.IntN(3000)) * time.Microsecond)
		cmd.Process.Signal(syscall.SIGKILL)
		cmd.Wait()
		b, err := r.ReadFile("sealed.age", 8<<20)
		must(t, err)
		if len(b) != 4<<20 || bytes.Count(b, b[:1]) != len(b) {
			t.Fatalf("after a kill the target is torn: %d bytes", len(b))
		}
		left, err := r.Leftovers()
		must(t, err)
		ents, _ := os.ReadDir(dir)
		if len(ents) != 1+len(left) {
			t.Fatalf("unrecognised files after a kill: %v (leftovers %q)", ents, left)
		}
		for _, l := range left {
			if !strings.HasPrefix(l, TempPrefix+"sealed.age-") {
				t.Fatalf("leftover %q without the prefix", l)
			}
			must(t, r.Remove(l))
			seen++
		}
	}
	if seen == 0 {
		t.Fatalf("30 kills mid-write left no temporary file; the crash window was never hit")
	}
	t.Logf("%d temporary files recognised after kills", seen)
}

func TestOpenat2Probe(t *testing.T) {
	r, err := Open(t.TempDir())
	must(t, err)
	defer r.Close()
	t.Logf("openat2 available: %v", haveOpenat2(r.fd))
}
