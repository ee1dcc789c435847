package rootfile

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"tandem/compare/table"
)

// Decoding in a child process.
//
// groot trusts the lengths a ROOT file declares: one changed byte can make
// it ask for hundreds of gigabytes at once, and the Go runtime ends the
// process on a failed allocation; no recover can catch that. So a program
// that calls [Child] first thing (cmd/tandem does, in an init function)
// decodes every ROOT input in a copy of itself, started with the hidden
// environment variable childEnv, that lowers its own memory limit before
// touching the file and streams the answer back (see stream.go). The
// parent bounds what it reads, stops the child when it is silent for
// longer than the time limit, and turns its death into a *table.Error
// naming the input. A program that never calls Child decodes in process.

// childEnv is the environment variable that makes a process a decoding
// child; its value is the protocol version.
const childEnv = "TANDEM_ROOTFILE_CHILD"

const protoVersion = 1

// maxRequest bounds the request a child reads on its standard input.
const maxRequest = 1 << 20

// Limits bound one decoding child.
type Limits struct {
	// Memory is the most memory, in bytes, the child may map.
	Memory int64
	// Time is the longest the child may go without sending anything: for
	// a histogram the whole decoding, for a tree the gap between two
	// chunks of rows.
	Time time.Duration
}

// DefaultLimits are the limits used unless the environment variables
// TANDEM_ROOT_MEMORY (a size such as 2GiB or 1500MB) and
// TANDEM_ROOT_TIMEOUT (a duration such as 90s) or [SetLimits] say
// otherwise.
var DefaultLimits = Limits{Memory: 1 << 30, Time: 20 * time.Second}

var (
	isolated  atomic.Bool
	limitsMu  sync.Mutex
	setLimits *Limits
)

// SetLimits sets the limits of the decoding children of this process; it
// overrides the environment.
func SetLimits(l Limits) {
	limitsMu.Lock()
	defer limitsMu.Unlock()
	setLimits = &l
}

// currentLimits returns the limits in force.
func currentLimits() (Limits, error) {
	limitsMu.Lock()
	defer limitsMu.Unlock()
	if setLimits != nil {
		return *setLimits, nil
	}
	l := DefaultLimits
	if s := os.Getenv("TANDEM_ROOT_MEMORY"); s != "" {
		n, err := ParseSize(s)
		if err != nil || n < 64<<20 {
			return l, table.Errorf("TANDEM_ROOT_MEMORY", 0, 0, "%q is not a memory size of at least 64MiB, such as 2GiB or 1500MB", s)
		}
		l.Memory = n
	}
	if s := os.Getenv("TANDEM_ROOT_TIMEOUT"); s != "" {
		d, err := time.ParseDuration(s)
		if err != nil || d < 100*time.Millisecond {
			return l, table.Errorf("TANDEM_ROOT_TIMEOUT", 0, 0, "%q is not a duration of at least 100ms, such as 90s or 5m", s)
		}
		l.Time = d
	}
	return l, nil
}

// ParseSize reads a size in bytes: a whole number with an optional unit
// B, kB, MB, GB (powers of 1000) or KiB, MiB, GiB (powers of 1024).
func ParseSize(s string) (int64, error) {
	units := []struct {
		suffix string
		mult   int64
	}{{"KiB", 1 << 10}, {"MiB", 1 << 20}, {"GiB", 1 << 30}, {"kB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"B", 1}}
	num, mult := s, int64(1)
	for _, u := range units {
		if strings.HasSuffix(s, u.suffix) {
			num, mult = strings.TrimSuffix(s, u.suffix), u.mult
			break
		}
	}
	n, err := strconv.ParseInt(num, 10, 64)
	if err != nil || n < 0 || n > (1<<62)/mult {
		return 0, fmt.Errorf("not a size: %q", s)
	}
	return n * mult, nil
}

// request is what the parent asks of a child, as JSON on its stdin.
type request struct {
	Version int      `json:"v"`
	Op      string   `json:"op"` // "hist", "columns" or "tree"
	Spec    string   `json:"spec"`
	Columns []string `json:"columns,omitempty"`
	Memory  int64    `json:"memory"`
}

// Child serves a decoding request when this process was started as a
// decoding child, and then reports served = true with the exit status to
// end the process with. Otherwise it returns served = false and, from then
// on, this process decodes ROOT files in children: copies of itself
// (os.Executable) whose start-up reaches this call again.
//
// Call it at the very start of the program, before anything else reads
// standard input or writes standard output, for example:
//
//	func init() {
//		if code, served := rootfile.Child(os.Stdin, os.Stdout); served {
//			os.Exit(code)
//		}
//	}
func Child(stdin io.Reader, stdout io.Writer) (code int, served bool) {
	v := os.Getenv(childEnv)
	if v == "" {
		isolated.Store(true)
		return 0, false
	}
	fw := newFrameWriter(stdout)
	if v != strconv.Itoa(protoVersion) {
		fw.fail("", fmt.Errorf("internal error: asked for protocol %q, this reader speaks %d", clean(v, 20), protoVersion))
		return 3, true
	}
	var req request
	data, err := io.ReadAll(io.LimitReader(stdin, maxRequest+1))
	if err == nil && len(data) > maxRequest {
		err = errors.New("request too long")
	}
	if err == nil {
		err = json.Unmarshal(data, &req)
	}
	if err == nil && req.Version != protoVersion {
		err = fmt.Errorf("request of protocol %d", req.Version)
	}
	if err != nil {
		fw.fail("", fmt.Errorf("internal error: bad request to the ROOT reader: %v", err))
		return 3, true
	}
	limitMemory(req.Memory)
	switch req.Op {
	case "hist":
		t, err := readHist(req.Spec)
		if err == nil && t.Len() > MaxBins {
			err = table.Errorf(req.Spec, 0, 0, "%d bins, more than the %d tandem reads", t.Len(), MaxBins)
		}
		if err != nil {
			fw.fail(req.Spec, err)
		} else {
			for i, n := range t.Notes {
				t.Notes[i] = clean(n, 1000) // names from the file: keep the frame small
			}
			fw.table(t)
		}
	case "columns":
		cols, err := treeColumns(req.Spec)
		var b []byte
		if err == nil {
			if b, err = json.Marshal(cols); err == nil && len(b) > maxMeta {
				err = table.Errorf(req.Spec, 0, 0, "the tree's %d branches have names too long to list (more than %s)", len(cols), FormatSize(maxMeta))
			}
		}
		if err != nil {
			fw.fail(req.Spec, err)
		} else if fw.frame('c', b) == nil {
			fw.frame('z', nil)
		}
	case "tree":
		err := readTree(req.Spec, req.Columns, func(rows []float64) error { return fw.floats('r', rows) })
		switch {
		case fw.err != nil: // the parent went away
		case err != nil:
			fw.fail(req.Spec, err)
		default:
			fw.frame('z', nil)
		}
	default:
		fw.fail(req.Spec, fmt.Errorf("internal error: unknown request %q", clean(req.Op, 40)))
	}
	if fw.err != nil {
		return 3, true
	}
	return 0, true
}

// child is a running decoding child as its parent sees it.
type child struct {
	spec     string
	limits   Limits
	cmd      *exec.Cmd
	stdout   io.ReadCloser
	stderr   cappedBuffer
	timer    *time.Timer
	timedOut atomic.Bool
	started  time.Time
}

// observe, when set (by tests), learns the peak memory and the time of
// each finished child.
var observe func(spec string, maxRSS int64, took time.Duration)

// startChild starts a child on req.
func startChild(req request) (*child, error) {
	lim, err := currentLimits()
	if err != nil {
		return nil, err
	}
	req.Version, req.Memory = protoVersion, lim.Memory
	body, err := json.Marshal(req)
	if err != nil || len(body) > maxRequest {
		return nil, table.Errorf(req.Spec, 0, 0, "too many or too long column names for one read")
	}
	exe, err := os.Executable()
	if err != nil {
		return nil, table.Errorf(req.Spec, 0, 0, "could not start the ROOT reader: %v", err)
	}
	c := &child{spec: req.Spec, limits: lim}
	c.cmd = exec.Command(exe)
	c.cmd.Env = append(os.Environ(), childEnv+"="+strconv.Itoa(protoVersion), "GOTRACEBACK=single")
	if os.Getenv("GORACE") == "" {
		// a binary built with -race otherwise waits 1 s at every exit
		c.cmd.Env = append(c.cmd.Env, "GORACE=atexit_sleep_ms=0")
	}
	c.cmd.Stdin = bytes.NewReader(body)
	c.cmd.Stderr = &c.stderr
	if c.stdout, err = c.cmd.StdoutPipe(); err != nil {
		return nil, table.Errorf(req.Spec, 0, 0, "could not start the ROOT reader: %v", err)
	}
	c.started = time.Now()
	if err := c.cmd.Start(); err != nil {
		return nil, table.Errorf(req.Spec, 0, 0, "could not start the ROOT reader: %v", err)
	}
	c.timer = time.AfterFunc(lim.Time, func() {
		c.timedOut.Store(true)
		c.cmd.Process.Kill()
	})
	return c, nil
}

// paused runs f with the time limit stopped: the time the caller's own
// function takes is not the child's.
func (c *child) paused(f func() error) error {
	c.timer.Stop()
	err := f()
	if !c.timedOut.Load() {
		c.timer.Reset(c.limits.Time)
	}
	return err
}

// finish waits for the child after its answer was read (streamErr nil) or
// broke off (streamErr the reason), and returns the error to report.
func (c *child) finish(streamErr error) error {
	c.timer.Stop()
	if streamErr != nil {
		// stop a child that is still going: the answer is no longer wanted
		c.cmd.Process.Kill()
	}
	c.stdout.Close()
	waitErr := c.cmd.Wait()
	if observe != nil {
		observe(c.spec, maxRSS(c.cmd.ProcessState), time.Since(c.started))
	}
	var ce *callerError
	var te *table.Error
	switch {
	case streamErr == nil:
		return nil // a complete, checked answer
	case errors.As(streamErr, &ce):
		return ce.err
	case errors.As(streamErr, &te):
		return te // the child's verdict on the input
	case c.timedOut.Load():
		return table.Errorf(c.spec, 0, 0, "could not decode the ROOT file: the reader went %v without progress, its time limit (damaged file? raise the limit with TANDEM_ROOT_TIMEOUT)", c.limits.Time)
	}
	msg := c.stderr.String()
	switch {
	case strings.Contains(msg, "out of memory"), strings.Contains(msg, "cannot allocate memory"), strings.Contains(msg, "failed to allocate"):
		return table.Errorf(c.spec, 0, 0, "could not decode the ROOT file: the reader ran out of its %s memory limit (a damaged file, or one that needs more: raise the limit with TANDEM_ROOT_MEMORY)", FormatSize(c.limits.Memory))
	case strings.Contains(msg, "stack exceeds"):
		return table.Errorf(c.spec, 0, 0, "could not decode the ROOT file: the reader's stack outgrew its limit (damaged file?)")
	case errors.Is(streamErr, errMalformed):
		return table.Errorf(c.spec, 0, 0, "internal error: the ROOT reader's answer broke the protocol: %v", streamErr)
	}
	why := firstLine(msg)
	if why == "" && waitErr != nil {
		why = waitErr.Error()
	} else if why == "" {
		why = streamErr.Error()
	}
	return table.Errorf(c.spec, 0, 0, "could not decode the ROOT file: the reader failed (%s)", clean(why, 200))
}

func firstLine(s string) string {
	for _, line := range strings.Split(s, "\n") {
		if line = strings.TrimSpace(line); line != "" {
			return line
		}
	}
	return ""
}

// FormatSize writes a size in bytes the way ParseSize reads it, in the
// largest binary unit that divides it.
func FormatSize(n int64) string {
	for _, u := range []struct {
		suffix string
		mult   int64
	}{{"GiB", 1 << 30}, {"MiB", 1 << 20}, {"KiB", 1 << 10}} {
		if n >= u.mult && n%u.mult == 0 {
			return strconv.FormatInt(n/u.mult, 10) + " " + u.suffix
		}
	}
	return strconv.FormatInt(n, 10) + " B"
}

// cappedBuffer keeps the first 8 KiB written to it.
type cappedBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (b *cappedBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	if room := 8<<10 - b.buf.Len(); room > 0 {
		b.buf.Write(p[:min(len(p), room)])
	}
	return len(p), nil
}

func (b *cappedBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

// inChild runs one request in a child and hands its stream to read.
func inChild(req request, read func(c *child, fr *frameReader) error) error {
	c, err := startChild(req)
	if err != nil {
		return err
	}
	fr, err := newFrameReader(c.stdout)
	if err == nil {
		err = read(c, fr)
	}
	return c.finish(err)
}

func histInChild(spec string) (t *table.Table, err error) {
	err = inChild(request{Op: "hist", Spec: spec}, func(c *child, fr *frameReader) error {
		t, err = fr.readTable(spec)
		return err
	})
	if err != nil {
		return nil, err
	}
	return t, nil
}

func columnsInChild(spec string) (cols []TreeColumn, err error) {
	err = inChild(request{Op: "columns", Spec: spec}, func(c *child, fr *frameReader) error {
		cols, err = fr.readColumns(spec)
		return err
	})
	if err != nil {
		return nil, err
	}
	return cols, nil
}

func treeInChild(spec string, columns []string, fn func([]float64) error) error {
	if len(columns) == 0 {
		return table.Errorf(spec, 0, 0, "no columns requested")
	}
	if len(columns) > maxCols {
		return table.Errorf(spec, 0, 0, "%d columns requested, more than the %d one read can take", len(columns), maxCols)
	}
	return inChild(request{Op: "tree", Spec: spec, Columns: columns}, func(c *child, fr *frameReader) error {
		return fr.readRows(spec, len(columns), c.paused, fn)
	})
}
