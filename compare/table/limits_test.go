package table

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

func wantErr(t *testing.T, err error, want string) *Error {
	t.Helper()
	if err == nil || !strings.Contains(err.Error(), want) {
		t.Fatalf("got %v, want %q", err, want)
	}
	e, ok := err.(*Error)
	if !ok {
		t.Fatalf("error of type %T", err)
	}
	return e
}

func TestBOM(t *testing.T) {
	tb, err := ParseCSV("t.csv", []byte("\xef\xbb\xbflo,hi,y\n0,1,2\n"), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if tb.LoName != "lo" || tb.Names[0] != "y" {
		t.Errorf("header %q %q", tb.LoName, tb.Names)
	}
	// Only at the start of the file.
	_, err = ParseCSV("t.csv", []byte("lo,hi,y\n\xef\xbb\xbf0,1,2\n"), CSVOptions{})
	wantErr(t, err, "t.csv:2:1:")
}

func TestSemicolons(t *testing.T) {
	in := []byte("lo;hi;rate\n0;1;2.5\n")
	e := wantErr(t, func() error { _, err := ParseCSV("t.csv", in, CSVOptions{}); return err }(), "t.csv:1:3: the header is separated by semicolons")
	if !strings.Contains(e.Hint, "--delimiter") {
		t.Errorf("hint %q", e.Hint)
	}
	tb, err := ParseCSV("t.csv", in, CSVOptions{Delim: ';'})
	if err != nil || tb.Column("rate")[0] != 2.5 {
		t.Fatalf("explicit delimiter: %v %v", tb, err)
	}
}

func TestEmptyStdin(t *testing.T) {
	_, err := ReadCSV(StdinName, strings.NewReader(""), CSVOptions{})
	if err == nil || err.Error() != "standard input is empty" {
		t.Errorf("got %v", err)
	}
	_, err = ReadCSV(StdinName, strings.NewReader("# only a comment\n"), CSVOptions{})
	wantErr(t, err, "standard input: empty table: no header row")
}

func TestLineLimit(t *testing.T) {
	lim := Limits{MaxLineBytes: 40}
	long := "0,1," + strings.Repeat("1", 60) + "\n"
	for _, c := range []struct{ in, want string }{
		{"lo,hi,y\n0,1,2\n" + long, "t.csv:3: line is longer than the limit of 40 bytes"},
		{"lo,hi,y\n0,1,2\n" + strings.TrimSuffix(long, "\n"), "t.csv:3: line is longer"},
		{"# c\nlo,hi," + strings.Repeat("y", 60) + "\n0,1,2\n", "t.csv:2: line is longer"},
		{strings.Repeat("z", 100), "t.csv:1: line is longer"},
		{"lo,hi,y\n" + strings.Repeat("\x00", 100), "t.csv:2:1: binary data"},
	} {
		for _, target := range []int{1, 16, blockBytes} {
			_, err := parse("t.csv", strings.NewReader(c.in), 0, CSVOptions{Limits: lim}, target)
			e := wantErr(t, err, c.want)
			if strings.Contains(c.want, "longer") && !strings.Contains(e.Hint, flagMaxLineBytes) {
				t.Errorf("hint %q", e.Hint)
			}
		}
	}
}

func TestSizeLimit(t *testing.T) {
	in := "lo,hi,y\n" + strings.Repeat("0,1,2\n", 20)
	lim := Limits{MaxBytes: 50}
	_, err := ParseCSV("t.csv", []byte(in), CSVOptions{Limits: lim})
	wantErr(t, err, "t.csv: input is larger than the limit of 50 bytes")
	_, err = ReadCSV("s", strings.NewReader(in), CSVOptions{Limits: lim})
	wantErr(t, err, "s: input is larger than the limit of 50 bytes")
	// An endless stream stops at the limit.
	_, err = ReadCSV("s", endless("1,2,3\n"), CSVOptions{Limits: Limits{MaxBytes: 1 << 20}})
	wantErr(t, err, "input is larger than the limit")
	_, err = ParseJSON("t.json", []byte(`{"columns": ["lo", "hi"], "rows": [[0, 1]]}`), CSVOptions{Limits: Limits{MaxBytes: 10}})
	wantErr(t, err, "input is larger than the limit")
}

type endlessReader struct{ unit []byte }

func endless(s string) io.Reader { return &endlessReader{[]byte(s)} }

func (r *endlessReader) Read(p []byte) (int, error) {
	n := 0
	for n < len(p) {
		n += copy(p[n:], r.unit)
	}
	return n, nil
}

// TestManyColumns: a 100,000-column header is refused by the column limit
// before its fields are split; within the limit, choosing the default
// selections stays linear (each column looked up in a set).
func TestManyColumns(t *testing.T) {
	var b strings.Builder
	b.WriteString("lo,hi")
	for i := 0; i < 100_000; i++ {
		fmt.Fprintf(&b, ",c%d", i)
	}
	b.WriteString("\n")
	_, err := ParseCSV("t.csv", []byte(b.String()), CSVOptions{})
	e := wantErr(t, err, "t.csv:1: the header has 100002 columns, more than the limit of 10000")
	if !strings.Contains(e.Hint, flagMaxColumns) {
		t.Errorf("hint %q", e.Hint)
	}
	var row strings.Builder
	row.WriteString("0,1")
	for i := 0; i < 100_000; i++ {
		row.WriteString(",1")
	}
	tb, err := ParseCSV("t.csv", []byte(b.String()+row.String()+"\n"), CSVOptions{Limits: Limits{MaxColumns: 200_000}})
	if err != nil {
		t.Fatal(err)
	}
	if n := len(DefaultSelections(tb)); n != 100_000 {
		t.Errorf("%d selections", n)
	}
	// The same from a stream in small blocks: the buffer grows to hold
	// the 200 kB lines.
	text := b.String() + row.String() + "\n" + strings.Replace(row.String(), "0,1", "1,2", 1) + "\n"
	st, err := parse("s", strings.NewReader(text), 0, CSVOptions{Limits: Limits{MaxColumns: 200_000}}, 4096)
	if err != nil || st.Len() != 2 || st.line(1) != 3 {
		t.Fatalf("stream: %v", err)
	}
}

// TestDevZero: endless binary input (the zero device, also behind a
// name that says JSON or TOML) is refused at once, in little memory.
func TestDevZero(t *testing.T) {
	if _, err := os.Stat("/dev/zero"); err != nil {
		t.Skip("no /dev/zero")
	}
	dir := t.TempDir()
	for _, n := range []string{"z.json", "z.toml"} {
		if err := os.Symlink("/dev/zero", filepath.Join(dir, n)); err != nil {
			t.Fatal(err)
		}
	}
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err := ReadFile("/dev/zero", CSVOptions{})
	wantErr(t, err, "/dev/zero:1:1: binary data (NUL byte)")
	_, err = ReadJSONFile(filepath.Join(dir, "z.json"), CSVOptions{})
	wantErr(t, err, "z.json:1:1: binary data")
	_, err = ReadTOMLFile(filepath.Join(dir, "z.toml"), CSVOptions{})
	wantErr(t, err, "z.toml:1:1: binary data")
	_, err = ReadMatrixFile("/dev/zero", 2, true)
	wantErr(t, err, "binary data")
	runtime.ReadMemStats(&after)
	if grew := after.TotalAlloc - before.TotalAlloc; grew > 64<<20 {
		t.Errorf("reading /dev/zero allocated %d MB", grew>>20)
	}
}

// TestBlockPositions: errors deep in a file read in many blocks on all
// cores carry the same file, line and column as in one block, and the
// first error in file order wins.
func TestBlockPositions(t *testing.T) {
	var b bytes.Buffer
	b.WriteString("# generated\nlo,hi,rate,stat\n")
	for i := 0; i < 50_000; i++ {
		if i%1000 == 999 {
			b.WriteString("# a comment between rows\n")
		}
		fmt.Fprintf(&b, "%d,%d,%.17g,%.6g\n", i, i+1, 1000+float64(i)/7, 3.5)
	}
	good := b.Bytes()
	one, err := parse("t.csv", bytes.NewReader(good), int64(len(good)), CSVOptions{}, 1<<30)
	if err != nil {
		t.Fatal(err)
	}
	many, err := parse("t.csv", bytes.NewReader(good), int64(len(good)), CSVOptions{}, 4096)
	if err != nil {
		t.Fatal(err)
	}
	if !equalTables(one, many) {
		t.Fatal("blocks changed the table")
	}
	if got, want := many.line(49_999), 2+50_000+50; got != want {
		t.Errorf("last bin on line %d, want %d", got, want)
	}
	lines := strings.SplitAfter(string(good), "\n")
	for _, c := range []struct {
		line int
		bad  string
		want string
	}{
		{30_000, "29000,29001,0x1p3,3.5\n", `t.csv:30000:13: column "rate": cannot parse "0x1p3"`},
		{40_001, "39950,39951,1e-999,3.5\n", `t.csv:40001:13: column "rate": number "1e-999" underflows to zero`},
		{45_000, "1,2,3\n", "t.csv:45000:6: row has 3 fields, header has 4"},
	} {
		mod := append([]string(nil), lines...)
		mod[c.line-1] = c.bad
		// A later error too: the first one must be reported.
		mod[len(mod)-2] = "x\n"
		data := []byte(strings.Join(mod, ""))
		for _, target := range []int{1 << 30, 4096, 100} {
			_, err := parse("t.csv", bytes.NewReader(data), int64(len(data)), CSVOptions{}, target)
			wantErr(t, err, c.want)
		}
	}
}

func equalTables(a, b *Table) bool {
	return fmt.Sprint(a) == fmt.Sprint(b)
}

func TestStrictStructured(t *testing.T) {
	for _, c := range []struct{ name, in, want string }{
		{"j.json", "{\"columns\": [\"lo\",\"hi\",\"y\"],\n \"rows\": [[0,1,1e-999]]}", "j.json:2:16: number \"1e-999\" underflows"},
		{"j.json", `{"columns": ["lo","hi","y"], "rows": [[0,1,"5"]]}`, `j.json:1:44: not a number: "5"`},
		{"j.json", `{"columns": ["lo","hi","y"], "rows": [[0,1,null]]}`, "not a number: null"},
		{"t.toml", "columns = [\"lo\",\"hi\",\"y\"]\nrows = [[0,1,1_000]]\n", "t.toml:2:14: cannot parse \"1_000\" as a number: digit separators"},
		{"t.toml", "columns = [\"lo\",\"hi\",\"y\"]\nrows = [\n  [0, 1, 0x10], # hex\n]\n", "t.toml:3:10: cannot parse \"0x10\""},
		{"t.toml", "columns = [\"lo\",\"hi\",\"y\"]\nrows = [[0,1,1e-400]]\n", "underflows to zero"},
		{"t.toml", "columns = [\"lo\",\"hi\",\"y\"]\nrows = [[0,1,+inf]]\n", "NaN and infinities"},
	} {
		var err error
		if strings.HasSuffix(c.name, ".json") {
			_, err = ParseJSON(c.name, []byte(c.in), CSVOptions{})
		} else {
			_, err = ParseTOML(c.name, []byte(c.in), CSVOptions{})
		}
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: got %v, want %q", c.in, err, c.want)
		}
	}
}

func TestStrictCSV(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"lo,hi,y\n0,1,0x1p3\n", `t.csv:2:5: column "y": cannot parse "0x1p3" as a number: only plain decimal`},
		{"lo,hi,y\n0,1,1_000\n", "digit separators"},
		{"lo,hi,y\n0,1,+Inf\n", "NaN and infinities"},
		{"lo,hi,y\n0,1,inf\n", "NaN and infinities"},
		{"lo,hi,y\n0,1, 1e-999\n", `t.csv:2:6: column "y": number "1e-999" underflows to zero`},
		{"lo,hi,y\n0,1,4e-320\n", "below the smallest normal"},
	} {
		_, err := ParseCSV("t.csv", []byte(c.in), CSVOptions{})
		wantErr(t, err, c.want)
	}
	tb, err := ParseCSV("t.csv", []byte("lo,hi,y\n0,1,0\n1,2,0.0\n2,3,0e5\n3,4,-0.000e-999\n"), CSVOptions{})
	if err != nil || tb.Len() != 4 {
		t.Fatalf("literal zeros: %v", err)
	}
}

func TestMatrixLineLimit(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "m.csv")
	os.WriteFile(p, []byte("1,0\n0,"+strings.Repeat("1", 100)+"\n"), 0o644)
	_, err := ReadMatrixFileLimits(p, 2, true, Limits{MaxLineBytes: 50})
	wantErr(t, err, "m.csv:2: line is longer than the limit of 50 bytes")
	_, err = ReadMatrixFileLimits(p, 2, true, Limits{MaxBytes: 20})
	wantErr(t, err, "larger than the limit of 20 bytes")
}
