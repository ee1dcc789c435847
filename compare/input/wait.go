package input

import (
	"io"
	"os"
	"strings"
	"sync"
	"time"

	"tandem/compare/table"
)

// Wait says how to tell a user that an input keeps tandem waiting: a named
// pipe that nobody writes to, a device, or a standard input that gives no
// bytes. When such an input has given no byte After its reading began
// (opening a named pipe waits for its writer), Notify is called once with
// the input's spec, from another goroutine. A nil Notify tells nothing.
type Wait struct {
	After  time.Duration
	Notify func(spec string)
}

// DefaultWaitAfter is how long an input may give nothing before the user
// is told.
const DefaultWaitAfter = 3 * time.Second

// ReadAllWaiting is [ReadAllFrom] that tells, as w says, of every input
// that is not a regular file and keeps tandem waiting.
func ReadAllWaiting(stdin io.Reader, opt table.CSVOptions, w Wait, specs ...string) ([]*table.Table, error) {
	if w.Notify == nil {
		return ReadAllFrom(stdin, opt, specs...)
	}
	out := make([]*table.Table, len(specs))
	errs := make([]error, len(specs))
	if err := checkStdinOnce(specs); err != nil {
		return nil, err
	}
	var wg sync.WaitGroup
	for i, s := range specs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			out[i], errs[i] = readWaiting(s, stdin, opt, w)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	return out, nil
}

// ReadWaiting is [ReadFrom] that tells, as w says, when the input is not a
// regular file and keeps tandem waiting.
func ReadWaiting(spec string, stdin io.Reader, opt table.CSVOptions, w Wait) (*table.Table, error) {
	return readWaiting(spec, stdin, opt, w)
}

func readWaiting(spec string, stdin io.Reader, opt table.CSVOptions, w Wait) (*table.Table, error) {
	if w.Notify == nil {
		return ReadFrom(spec, stdin, opt)
	}
	if spec == Stdin {
		if f, ok := stdin.(*os.File); ok {
			if fi, err := f.Stat(); err == nil && fi.Mode().IsRegular() {
				return ReadFrom(spec, stdin, opt)
			}
		}
		wr := newWatch(spec, stdin, w)
		defer wr.stop()
		return ReadFrom(spec, wr, opt)
	}
	fi, err := os.Stat(spec)
	if err != nil || fi.Mode()&(os.ModeNamedPipe|os.ModeCharDevice) == 0 {
		return ReadFrom(spec, stdin, opt)
	}
	// A named pipe or a device: the opening itself waits for a writer.
	wr := newWatch(spec, nil, w)
	defer wr.stop()
	f, err := os.Open(spec)
	if err != nil {
		return nil, table.Errorf(spec, 0, 0, "%v", unwrapPath(err))
	}
	defer f.Close()
	wr.r = f
	lower := strings.ToLower(spec)
	switch {
	case strings.HasSuffix(lower, ".json"):
		return table.ReadJSON(spec, wr, opt)
	case strings.HasSuffix(lower, ".toml"):
		return table.ReadTOML(spec, wr, opt)
	case strings.HasSuffix(lower, ".tsv") && opt.Delim == 0:
		opt.Delim = '\t'
	}
	return table.ReadCSV(spec, wr, opt)
}

func unwrapPath(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

// watch is a reader whose first byte (or error, or stop) cancels the
// notice that it keeps tandem waiting.
type watch struct {
	r     io.Reader
	timer *time.Timer
	once  sync.Once
}

func newWatch(spec string, r io.Reader, w Wait) *watch {
	after := w.After
	if after <= 0 {
		after = DefaultWaitAfter
	}
	return &watch{r: r, timer: time.AfterFunc(after, func() { w.Notify(spec) })}
}

func (w *watch) stop() { w.once.Do(func() { w.timer.Stop() }) }

func (w *watch) Read(p []byte) (int, error) {
	n, err := w.r.Read(p)
	if n > 0 || err != nil {
		w.stop()
	}
	return n, err
}
