package rootfile

import (
	"bytes"
	"encoding/binary"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/google/go-cmp/cmp"

	"tandem/compare/table"
)

// mutate copies go-hep's file rel into dir as name with byte b at offset.
func mutate(t *testing.T, rel, dir, name string, offset int, b byte) string {
	t.Helper()
	data, err := os.ReadFile(gohep(t, rel))
	if err != nil {
		t.Fatal(err)
	}
	data[offset] = b
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// TestHugeAllocation is the reproducer of the hardening issue: go-hep's
// dirs-6.14.00.root (groot/testdata in the module) with byte 0x3a at
// offset 1142 makes groot ask for a 194 GB allocation, which ends a Go
// process outright. Decoded in a child, it is a clean error naming the
// object, and the child never got near the limit.
func TestHugeAllocation(t *testing.T) {
	p := mutate(t, dirs, t.TempDir(), "x.root", 1142, 0x3a)
	var peak int64
	observe = func(_ string, rss int64, _ time.Duration) { peak = max(peak, rss) }
	defer func() { observe = nil }()
	_, err := Read(p + ":dir1/dir11/h1")
	want := p + ":dir1/dir11/h1: could not decode the ROOT file: the reader ran out of its 1 GiB memory limit"
	if err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Fatalf("got %v\nwant %s…", err, want)
	}
	mustBeInputError(t, err)
	if peak > 256<<20 {
		t.Errorf("the child peaked at %d MB", peak>>20)
	}
	t.Logf("child peak RSS %.1f MB", float64(peak)/1e6)
}

// TestBinaryRefusesHugeAllocation runs the reproducer through the real
// tandem binary: exit status 2 and one error line naming the object.
func TestBinaryRefusesHugeAllocation(t *testing.T) {
	if testing.Short() {
		t.Skip("builds cmd/tandem")
	}
	good := gohep(t, dirs) // skips when go-hep (or the go command) is not at hand
	tmp := t.TempDir()
	exe := filepath.Join(tmp, "tandem")
	if out, err := exec.Command("go", "build", "-o", exe, "tandem/cmd/tandem").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	bad := mutate(t, dirs, tmp, "x.root", 1142, 0x3a)
	cmd := exec.Command(exe, "compare", bad+":dir1/dir11/h1", good+":dir1/dir11/h1")
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	err := cmd.Run()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != 2 {
		t.Fatalf("exit: %v\n%s", err, stderr.String())
	}
	want := "tandem: error: " + bad + ":dir1/dir11/h1: could not decode the ROOT file: the reader ran out of its 1 GiB memory limit"
	if !strings.HasPrefix(stderr.String(), want) || strings.Count(stderr.String(), "\n") != 1 || stdout.Len() != 0 {
		t.Errorf("stderr %q, stdout %q", stderr.String(), stdout.String())
	}
	// the intact file reads through the binary's child
	if out, err := exec.Command(exe, "compare", good+":dir1/dir11/h1", good+":dir1/dir11/h1").CombinedOutput(); err != nil {
		t.Errorf("intact file: %v\n%s", err, out)
	}
	// a higher limit is taken from the environment and named
	cmd = exec.Command(exe, "compare", bad+":dir1/dir11/h1", good+":dir1/dir11/h1")
	cmd.Env = append(os.Environ(), "TANDEM_ROOT_MEMORY=2GiB")
	out, _ := cmd.CombinedOutput()
	if !strings.Contains(string(out), "its 2 GiB memory limit") {
		t.Errorf("with TANDEM_ROOT_MEMORY=2GiB: %s", out)
	}
}

// TestTimeLimit: a child that does not answer within the time limit is
// stopped, and the error says so.
func TestTimeLimit(t *testing.T) {
	SetLimits(Limits{Memory: DefaultLimits.Memory, Time: time.Nanosecond})
	defer func() { setLimits = nil }()
	_, err := Read(gohep(t, graphs) + ":tge")
	if err == nil || !strings.Contains(err.Error(), "without progress, its time limit") {
		t.Fatalf("got %v", err)
	}
	mustBeInputError(t, err)
	err = ReadTree(gohep(t, flatTree)+":tree", []string{"F64"}, func([]float64) error { return nil })
	if err == nil || !strings.Contains(err.Error(), "time limit") {
		t.Fatalf("tree: %v", err)
	}
}

// TestCallerTimeIsNotTheChilds: a slow fn does not count against the
// child's time limit, which only covers the gaps between its frames.
func TestCallerTimeIsNotTheChilds(t *testing.T) {
	SetLimits(Limits{Memory: DefaultLimits.Memory, Time: 3 * time.Second})
	defer func() { setLimits = nil }()
	p := filepath.Join(t.TempDir(), "t.root")
	if err := writeTree(p, "", 3*rowChunk, func(int, *event) {}); err != nil {
		t.Fatal(err)
	}
	n := 0
	err := ReadTree(p+":events", []string{"e"}, func([]float64) error {
		if n++; n%rowChunk == 1 {
			time.Sleep(2 * time.Second) // 6 s in all, more than the limit
		}
		return nil
	})
	if err != nil || n != 3*rowChunk {
		t.Fatalf("%d rows: %v", n, err)
	}
}

func TestLimitsFromEnvironment(t *testing.T) {
	for _, c := range []struct {
		mem, timeout string
		want         Limits
		bad          string
	}{
		{"", "", DefaultLimits, ""},
		{"2GiB", "90s", Limits{2 << 30, 90 * time.Second}, ""},
		{"1500MB", "", Limits{1500e6, DefaultLimits.Time}, ""},
		{"lots", "", Limits{}, "TANDEM_ROOT_MEMORY"},
		{"1MiB", "", Limits{}, "at least 64MiB"},
		{"", "soon", Limits{}, "TANDEM_ROOT_TIMEOUT"},
		{"", "1ns", Limits{}, "at least 100ms"},
	} {
		t.Setenv("TANDEM_ROOT_MEMORY", c.mem)
		t.Setenv("TANDEM_ROOT_TIMEOUT", c.timeout)
		got, err := currentLimits()
		if c.bad != "" {
			if err == nil || !strings.Contains(err.Error(), c.bad) {
				t.Errorf("%q %q: %v", c.mem, c.timeout, err)
			}
			if _, err := Read(gohep(t, graphs) + ":tge"); err == nil || !strings.Contains(err.Error(), c.bad) {
				t.Errorf("Read with %q %q: %v", c.mem, c.timeout, err)
			}
			continue
		}
		if err != nil || got != c.want {
			t.Errorf("%q %q: %+v %v", c.mem, c.timeout, got, err)
		}
	}
	for s, want := range map[string]int64{"0": 0, "17B": 17, "3kB": 3000, "3KiB": 3072, "5MB": 5e6, "5MiB": 5 << 20, "2GB": 2e9, "2GiB": 2 << 30} {
		if got, err := ParseSize(s); err != nil || got != want {
			t.Errorf("ParseSize(%q) = %d, %v", s, got, err)
		}
	}
	for _, s := range []string{"", "-1", "1.5GiB", "GiB", "1 GiB", "9999999999GiB", "1TB"} {
		if _, err := ParseSize(s); err == nil {
			t.Errorf("ParseSize(%q) accepted", s)
		}
	}
	for n, want := range map[int64]string{1 << 30: "1 GiB", 3 << 20: "3 MiB", 1500e6: "1500000000 B", 2048: "2 KiB"} {
		if got := FormatSize(n); got != want {
			t.Errorf("FormatSize(%d) = %q", n, got)
		}
	}
}

// TestChildMatchesInProcess: for good files the child's answer is exactly
// what decoding in this process gives.
func TestChildMatchesInProcess(t *testing.T) {
	for _, spec := range []string{
		gohep(t, gaussH1) + ":h1d", gohep(t, gaussH1) + ":h1f-var", gohep(t, graphs) + ":tgae",
		gohep(t, graphs) + ":tge", gohep(t, dirs), gohep(t, gaussH1) + ":nope", "testdata/seeds/hist.root:h",
	} {
		a, errA := Read(spec)
		b, errB := readHist(spec)
		if diff := cmp.Diff(b, a); diff != "" || (errA == nil) != (errB == nil) || (errA != nil && errA.Error() != errB.Error()) {
			t.Errorf("%s: child differs (-in process +child):\n%s\n%v\n%v", spec, diff, errB, errA)
		}
	}
	spec := gohep(t, flatTree) + ":tree"
	a, errA := TreeColumns(spec)
	b, errB := treeColumns(spec)
	if diff := cmp.Diff(b, a); diff != "" || errA != nil || errB != nil {
		t.Errorf("columns differ:\n%s %v %v", diff, errA, errB)
	}
}

// TestChildRefusesBadRequests runs this test binary as a child by hand.
func TestChildRefusesBadRequests(t *testing.T) {
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ env, stdin, want string }{
		{"99", `{}`, "asked for protocol"},
		{"1", `{`, "bad request"},
		{"1", `{"v":2}`, "request of protocol 2"},
		{"1", strings.Repeat(" ", maxRequest+1), "request too long"},
		{"1", `{"v":1,"op":"dance","spec":"x.root"}`, "unknown request"},
		{"1", `{"v":1,"op":"hist","spec":"/nonexistent.root:h"}`, "not a readable ROOT file"},
	} {
		cmd := exec.Command(exe)
		cmd.Env = append(os.Environ(), childEnv+"="+c.env)
		cmd.Stdin = strings.NewReader(c.stdin)
		out, _ := cmd.Output()
		fr, err := newFrameReader(bytes.NewReader(out))
		if err != nil {
			t.Fatalf("%s: %v (%q)", c.want, err, out)
		}
		_, err = fr.readTable("x")
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("want %q, got %v", c.want, err)
		}
	}
}

// TestStreamBounds: the parent refuses frames beyond their bounds before
// allocating them, and streams that break off or break the order.
func TestStreamBounds(t *testing.T) {
	frame := func(kind byte, n uint32, payload string) string {
		var h [5]byte
		h[0] = kind
		binary.LittleEndian.PutUint32(h[1:], n)
		return string(h[:]) + payload
	}
	for _, c := range []struct{ stream, want string }{
		{"", "EOF"},
		{"tandem-rootfile 2\n", "another protocol"},
		{streamMagic + frame('t', math.MaxUint32, ""), "more than the"},
		{streamMagic + frame('e', math.MaxUint32, ""), "more than the"},
		{streamMagic + frame('r', 8, "12345678"), "where"},
		{streamMagic + frame('t', 2, "{}") + frame('f', 0, "") + frame('f', 0, "") + frame('f', 0, ""), "where \"z\""},
		{streamMagic + frame('t', 11, `{"bins":-1}`), "malformed"},
		{streamMagic + frame('t', 10, `{"bins":1}`) + frame('f', 0, ""), "column of 0 bytes"},
		{streamMagic + frame('t', 10, `{"bins":1}`) + frame('f', 8, "1234"), "EOF"},
		{streamMagic + frame('e', 2, `{}`), "unreadable error frame"},
		{streamMagic + frame('e', 29, `{"msg":"bad \u202e","col":-3}`), "x.root: bad ?"},
	} {
		fr, err := newFrameReader(strings.NewReader(c.stream))
		if err == nil {
			_, err = fr.readTable("x.root")
		}
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: %v, want %q", c.stream, err, c.want)
		}
	}
	run := func(f func() error) error { return f() }
	for _, c := range []struct{ stream, want string }{
		{streamMagic + frame('r', 12, "123456781234"), "not whole rows"},
		{streamMagic + frame('r', 8*(2*rowChunk+1), ""), "more than the"},
		{streamMagic + frame('z', 1, "x"), "with a payload"},
		{streamMagic + frame('r', 16, "1234567812345678"), "EOF"},
	} {
		fr, _ := newFrameReader(strings.NewReader(c.stream))
		err := fr.readRows("x.root", 2, run, func([]float64) error { return nil })
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: %v, want %q", c.stream, err, c.want)
		}
	}
}

// FuzzChildStream: whatever a child writes, the parent's decoders return a
// value or an error, never panic, and allocate within the frame bounds.
// Seeds: testdata/streams, recorded from real answers by TestWriteSeeds.
func FuzzChildStream(f *testing.F) {
	paths, err := filepath.Glob(streamGlob)
	if err != nil || len(paths) == 0 {
		f.Fatalf("no seed streams match %s", streamGlob)
	}
	for _, p := range paths {
		data, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		run := func(f func() error) error { return f() }
		if fr, err := newFrameReader(bytes.NewReader(data)); err == nil {
			if tb, err := fr.readTable("x.root"); err == nil && tb.Validate() != nil {
				t.Fatal("an invalid table came through")
			}
		}
		if fr, err := newFrameReader(bytes.NewReader(data)); err == nil {
			fr.readColumns("x.root")
		}
		for ncols := 1; ncols <= 3; ncols++ {
			if fr, err := newFrameReader(bytes.NewReader(data)); err == nil {
				fr.readRows("x.root", ncols, run, func(row []float64) error {
					if len(row) != ncols {
						t.Fatalf("row of %d, want %d", len(row), ncols)
					}
					return nil
				})
			}
		}
	})
}

const streamGlob = "testdata/streams/*.bin"

// writeStreams records the child's answers for the seeds of
// FuzzChildStream.
func writeStreams(dir string) error {
	write := func(name string, f func(fw *frameWriter) error) error {
		var buf bytes.Buffer
		if err := f(newFrameWriter(&buf)); err != nil {
			return err
		}
		return os.WriteFile(filepath.Join(dir, name), buf.Bytes(), 0o644)
	}
	h, err := readHist("testdata/seeds/hist.root:h")
	if err != nil {
		return err
	}
	cols, err := treeColumns("testdata/seeds/tree.root:dir/events")
	if err != nil {
		return err
	}
	return errors.Join(
		write("hist.bin", func(fw *frameWriter) error { return fw.table(h) }),
		write("columns.bin", func(fw *frameWriter) error { fw.json('c', cols); return fw.frame('z', nil) }),
		write("rows.bin", func(fw *frameWriter) error {
			readTree("testdata/seeds/tree.root:dir/events", []string{"evt", "e", "pass"}, func(rows []float64) error { return fw.floats('r', rows) })
			return fw.frame('z', nil)
		}),
		write("error.bin", func(fw *frameWriter) error {
			return fw.fail("x.root", table.Errorf("x.root:h", 0, 0, "no object %q in the file", "h"))
		}),
	)
}
