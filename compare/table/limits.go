package table

import (
	"bytes"
	"io"
	"os"
)

// Limits bound what a reader accepts, so that no input can make tandem use
// unbounded memory or time. A zero field takes its value from
// [DefaultLimits]. Inputs beyond a limit are refused with an [*Error] whose
// Hint names the command-line flag that raises it.
type Limits struct {
	// MaxLineBytes is the longest line of a text table or matrix, in
	// bytes without the line ending.
	MaxLineBytes int
	// MaxColumns is the largest number of columns of a table header.
	MaxColumns int
	// MaxBytes is the largest input, in bytes, and the most memory the
	// numbers of a text table may take (8 bytes a number).
	MaxBytes int64
}

// DefaultLimits are generous for binned tables: a 10⁶-bin table of five
// columns written with "%.18e" is 125 MB, a quarter of the default size.
// MaxBytes also bounds the memory of a text table's numbers (8 bytes
// each), which short numbers ("0,0,…") would otherwise make four times
// the input: whatever the input, file or endless pipe, the numbers held
// stay within MaxBytes.
var DefaultLimits = Limits{MaxLineBytes: 1 << 20, MaxColumns: 10_000, MaxBytes: 512 << 20}

// resolved returns l with zero fields replaced by the defaults.
func (l Limits) resolved() Limits {
	if l.MaxLineBytes <= 0 {
		l.MaxLineBytes = DefaultLimits.MaxLineBytes
	}
	if l.MaxColumns <= 0 {
		l.MaxColumns = DefaultLimits.MaxColumns
	}
	if l.MaxBytes <= 0 {
		l.MaxBytes = DefaultLimits.MaxBytes
	}
	return l
}

// Flag names proposed for raising each limit on the command line; they
// appear in the hints of limit errors.
const (
	flagMaxLineBytes = "--max-line-bytes"
	flagMaxColumns   = "--max-columns"
	flagMaxBytes     = "--max-input-bytes"
)

func tooLarge(name string, lim Limits) *Error {
	e := Errorf(name, 0, 0, "input is larger than the limit of %d bytes", lim.MaxBytes)
	e.Hint = "raise the limit with " + flagMaxBytes
	return e
}

// lineTooLong refuses a line beyond the limit, or as binary data when it
// has a NUL byte.
func lineTooLong(name string, line int, text []byte, lim Limits) *Error {
	if i := bytes.IndexByte(text, 0); i >= 0 {
		return Errorf(name, line, i+1, "binary data (NUL byte); expected a CSV or TSV table")
	}
	e := Errorf(name, line, 0, "line is longer than the limit of %d bytes", lim.MaxLineBytes)
	e.Hint = "raise the limit with " + flagMaxLineBytes
	return e
}

// StdinName is the name that readers give the standard input in messages.
// An empty standard input is reported as "standard input is empty".
const StdinName = "standard input"

func isStdin(name string) bool { return name == StdinName || name == "<stdin>" || name == "-" }

// emptyInput is the error for an input of zero bytes.
func emptyInput(name string) *Error {
	if isStdin(name) {
		return Errorf("", 0, 0, "standard input is empty")
	}
	return Errorf(name, 0, 0, "empty table: no header row")
}

// openFile opens path for reading, refusing directories and regular files
// above the size limit. size is the file size when known, else 0.
func openFile(path string, lim Limits) (f *os.File, size int64, err error) {
	f, err = os.Open(path)
	if err != nil {
		return nil, 0, Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	fi, err := f.Stat()
	if err != nil {
		return f, 0, nil
	}
	if fi.IsDir() {
		f.Close()
		return nil, 0, Errorf(path, 0, 0, "is a directory, not a table")
	}
	if fi.Mode().IsRegular() {
		size = fi.Size()
		if size > lim.MaxBytes {
			f.Close()
			return nil, 0, tooLarge(path, lim)
		}
	}
	return f, size, nil
}

// readBounded reads a whole text input of at most lim.MaxBytes, refusing at
// once a NUL byte (binary data, or /dev/zero) with its line and column.
func readBounded(name string, r io.Reader, size int64, lim Limits, kind string) ([]byte, error) {
	buf := make([]byte, 0, min(max(size+1, 512), lim.MaxBytes+1))
	for {
		if len(buf) == cap(buf) {
			buf = append(buf, 0)[:len(buf)]
		}
		room := min(int64(cap(buf)-len(buf)), lim.MaxBytes+1-int64(len(buf)))
		n, err := r.Read(buf[len(buf) : len(buf)+int(room)])
		if i := bytes.IndexByte(buf[len(buf):len(buf)+n], 0); i >= 0 {
			line, col := position(buf[:len(buf)+n], int64(len(buf)+i))
			return nil, Errorf(name, line, col, "binary data (NUL byte); expected %s", kind)
		}
		buf = buf[:len(buf)+n]
		if int64(len(buf)) > lim.MaxBytes {
			return nil, tooLarge(name, lim)
		}
		if err == io.EOF {
			return buf, nil
		}
		if err != nil {
			return nil, Errorf(name, 0, 0, "%v", unwrapPath(err))
		}
	}
}

// ReadFileBounded reads a whole file of at most lim.MaxBytes (zero fields
// of lim are the defaults), refusing binary data as it arrives; it is for
// formats whose decoders need the whole text, such as JSON and TOML.
func ReadFileBounded(path string, lim Limits) ([]byte, error) {
	lim = lim.resolved()
	f, size, err := openFile(path, lim)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return readBounded(path, f, size, lim, "a text table")
}
