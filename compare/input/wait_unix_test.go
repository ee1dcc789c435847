//go:build unix

package input

import (
	"io"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"

	"tandem/compare/table"
)

const waitTable = "lo,hi,y\n0,1,2\n1,2,3\n"

// TestWaitFIFO: a named pipe that nobody writes to yet gets its notice
// (the writer here starts only once it has been given), then is read
// whole; no time limit decides the outcome.
func TestWaitFIFO(t *testing.T) {
	for _, name := range []string{"t.csv", "t.json", "t.tsv"} {
		t.Run(name, func(t *testing.T) {
			p := filepath.Join(t.TempDir(), name)
			if err := syscall.Mkfifo(p, 0o600); err != nil {
				t.Skipf("cannot make a named pipe: %v", err)
			}
			body := waitTable
			switch name {
			case "t.json":
				body = `{"columns": ["lo", "hi", "y"], "rows": [[0, 1, 2], [1, 2, 3]]}`
			case "t.tsv":
				body = "lo\thi\ty\n0\t1\t2\n1\t2\t3\n"
			}
			told := make(chan string, 1)
			wrote := make(chan error, 1)
			go func() {
				<-told
				f, err := os.OpenFile(p, os.O_WRONLY, 0)
				if err == nil {
					_, err = io.WriteString(f, body)
					if cerr := f.Close(); err == nil {
						err = cerr
					}
				}
				wrote <- err
			}()
			var saw string
			tb, err := ReadWaiting(p, nil, table.CSVOptions{}, Wait{After: 10 * time.Millisecond, Notify: func(s string) {
				saw = s
				told <- s
			}})
			if err != nil {
				t.Fatal(err)
			}
			if err := <-wrote; err != nil {
				t.Fatal(err)
			}
			if saw != p {
				t.Errorf("notice for %q, want %q", saw, p)
			}
			if tb.Len() != 2 || tb.Column("y")[1] != 3 {
				t.Errorf("read %v %v", tb.Names, tb.Cols)
			}
		})
	}
}

// TestWaitNoNotice: an input that gives its bytes gets no notice (the
// timer is stopped), and a regular file is read as before.
func TestWaitNoNotice(t *testing.T) {
	called := make(chan string, 4)
	w := Wait{After: time.Hour, Notify: func(s string) { called <- s }}
	p := filepath.Join(t.TempDir(), "t.csv")
	if err := os.WriteFile(p, []byte(waitTable), 0o644); err != nil {
		t.Fatal(err)
	}
	r, wr := io.Pipe()
	go func() {
		io.WriteString(wr, waitTable)
		wr.Close()
	}()
	ts, err := ReadAllWaiting(r, table.CSVOptions{}, w, p, Stdin)
	if err != nil {
		t.Fatal(err)
	}
	if ts[0].Len() != 2 || ts[1].Len() != 2 {
		t.Errorf("read %d and %d bins", ts[0].Len(), ts[1].Len())
	}
	select {
	case s := <-called:
		t.Errorf("notice for %s, which gave its bytes", s)
	default:
	}
	if _, err := ReadAllWaiting(r, table.CSVOptions{}, w, Stdin, Stdin); err == nil {
		t.Error("standard input named twice was accepted")
	}
}

// TestWaitStdin: a standard input that gives nothing yet is told of, with
// the spec "-".
func TestWaitStdin(t *testing.T) {
	r, wr := io.Pipe()
	told := make(chan string, 1)
	go func() {
		<-told
		io.WriteString(wr, waitTable)
		wr.Close()
	}()
	tb, err := ReadWaiting(Stdin, r, table.CSVOptions{}, Wait{After: time.Millisecond, Notify: func(s string) { told <- s }})
	if err != nil || tb.Len() != 2 {
		t.Fatalf("%v %v", tb, err)
	}
}
