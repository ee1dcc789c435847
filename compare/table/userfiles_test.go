package table

import (
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// needPandas returns Debian's /usr/bin/python3 when it imports pandas and
// numpy; it skips the test otherwise, and fails it when CI demands the
// tools (TANDEM_REQUIRE_TOOLS=1, set by .ci/run).
func needPandas(t *testing.T) string {
	t.Helper()
	const py = "/usr/bin/python3"
	out, err := exec.Command(py, "-c", "import pandas, numpy").CombinedOutput()
	if err != nil {
		msg := strings.TrimSpace(string(out))
		if msg == "" {
			msg = err.Error()
		}
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatalf("%s with pandas and numpy is required in CI: %s", py, msg)
		}
		t.Skipf("skipping: %s cannot import pandas and numpy (apt-get install python3-pandas): %s", py, msg)
	}
	return py
}

// TestUserFiles reads the files that pandas, numpy, R and Python's csv
// module write by default (made by testdata/userfiles/make.py with
// Debian's pandas and numpy) and holds tandem's numbers to the ones those
// tools read back from the same files (pandas' read_csv and read_json
// with precise_float, numpy's genfromtxt), bit for bit. Each case is a row
// of the table of files users bring, with the note tandem gives.
func TestUserFiles(t *testing.T) {
	py := needPandas(t)
	dir := t.TempDir()
	if out, err := exec.Command(py, filepath.Join("testdata", "userfiles", "make.py"), dir).CombinedOutput(); err != nil {
		t.Fatalf("make.py: %v\n%s", err, out)
	}
	if v, err := os.ReadFile(filepath.Join(dir, "versions.txt")); err == nil {
		t.Logf("made with %s", strings.TrimSpace(string(v)))
	}
	for _, c := range []struct{ file, note string }{
		{"pandas_index.csv", "numbers the rows 0 to 49 (a row index"},
		{"numpy_header.csv", "column names taken from the commented first line"},
		{"r_write_csv.csv", "numbers the rows 1 to 50 (a row index"},
		{"quote_all_index.csv", "numbers the rows 1 to 50 (a row index"},
		{"quote_all.csv", ""},
		{"pandas_split.json", `to_json(orient="split")`},
		{"pandas_records.json", `to_json(orient="records")`},
		{"pandas_columns.json", `to_json(orient="columns")`},
		{"pandas_index.json", `to_json(orient="index")`},
	} {
		t.Run(c.file, func(t *testing.T) {
			p := filepath.Join(dir, c.file)
			var got *Table
			var err error
			if strings.HasSuffix(c.file, ".json") {
				got, err = ReadJSONFile(p, CSVOptions{})
			} else {
				got, err = ReadFile(p, CSVOptions{})
			}
			if err != nil {
				t.Fatal(err)
			}
			want, err := ReadFile(p+".expect", CSVOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got.Names, []string{"rate", "stat"}) {
				t.Fatalf("columns %q, want rate and stat", got.Names)
			}
			if !slices.Equal(got.Lo, want.Lo) || !slices.Equal(got.Hi, want.Hi) {
				t.Errorf("bin edges differ from what the writing tool reads back")
			}
			for k, name := range want.Names {
				if g := got.Column(name); !slices.Equal(g, want.Cols[k]) {
					t.Errorf("column %s differs from what the writing tool reads back", name)
				}
			}
			notes := strings.Join(got.Notes, "\n")
			if c.note == "" && notes != "" || !strings.Contains(notes, c.note) {
				t.Errorf("notes %q, want %q", notes, c.note)
			}
		})
	}
}

// TestUserFileRefusals: what tandem cannot read from users' files is
// refused with the position and a hint naming the writer's option.
func TestUserFileRefusals(t *testing.T) {
	for _, c := range []struct{ in, want, hint string }{
		// An unnamed first column that does not number the rows.
		{",lo,hi,y\n0,0,1,2\n2,1,2,3\n", "t.csv:3:1: the first column has no name and is not a row index: 2 where 1 was expected", "index=False"},
		{",lo,hi,y\n7,0,1,2\n", "t.csv:2:1: the first column has no name and is not a row index: 7 where 0 was expected", "row.names=FALSE"},
		{",lo,hi,y\nx,0,1,2\n", `t.csv:2:1: column "(unnamed index)"`, ""},
		// A row of numbers where the header should be.
		{"# lo,hi\n0,1,2\n", "t.csv:2:1: expected a header of column names, found a row of numbers", "comments=''"},
		{"# written by a script\n0,1,2\n", "t.csv:2:1: expected a header of column names", "comments=''"},
		{"0,1,2\n", "t.csv:1:1: expected a header of column names", "put the column names on the first line"},
		// numpy's savetxt with its default delimiter, a space.
		{"# lo hi y\n0.0e+00 1.0e+00 2.0e+00\n", `t.csv:2:1: missing bin-edge column "lo"`, "delimiter=','"},
		// Quoting (RFC 4180) that tandem refuses.
		{"lo,hi,y\n0,1,\"2\n3\"\n", "t.csv:2:5: quoted field is not closed on its line", "may not span lines"},
		{"\"lo\"x,hi,y\n0,1,2\n", "t.csv:1:5: text after the closing quote", ""},
		{"lo,hi,\"a,b\"\n0,1,2\n", `t.csv:1:7: column name "a,b" holds ','`, ""},
		{"lo,hi,\"#y\"\n0,1,2\n", `t.csv:1:7: column name "#y" starts with '#'`, ""},
		{"lo,hi,y\n0,1,\"2\",\"3\"\n", "t.csv:2:9: row has 4 fields, header has 3", ""},
		{"lo,hi,y\n0,1,\"2x\"\n", `t.csv:2:5: column "y"`, ""},
	} {
		_, err := ParseCSV("t.csv", []byte(c.in), CSVOptions{})
		e := wantErr(t, err, c.want)
		if !strings.Contains(e.Hint, c.hint) {
			t.Errorf("%q: hint %q, want %q", c.in, e.Hint, c.hint)
		}
	}
	// Quoted fields are read as RFC 4180 says ("" is one quote, which a
	// column name may not hold), blanks around the quotes are trimmed.
	_, err := ParseCSV("t.csv", []byte("lo,hi,\"say \"\"y\"\"\"\n0,1,2\n"), CSVOptions{})
	wantErr(t, err, `t.csv:1:7: column name "say \"y\"" holds '"'`)
	tb, err := ParseCSV("t.csv", []byte("\"lo\" , \"hi\",\"rate y\"\n \"0\" ,1,\"2.5\"\n"), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if tb.Names[0] != "rate y" || tb.Cols[0][0] != 2.5 || tb.Lo[0] != 0 {
		t.Errorf("got %q %v %v", tb.Names, tb.Lo, tb.Cols)
	}
	// Edge columns named by numbers keep a numeric header.
	if tb, err := ParseCSV("t.csv", []byte("0,1,2\n5,6,7\n"), CSVOptions{Lo: "0", Hi: "1"}); err != nil || tb.Names[0] != "2" || tb.Lo[0] != 5 {
		t.Errorf("numeric names: %v %v", tb, err)
	}
	for _, c := range []struct{ in, want string }{
		{`[{"lo":0,"hi":1,"y":null}]`, `t.json:1:21: null where a number should be (pandas writes NaN as null)`},
		{"[{\"lo\":0,\"hi\":1,\"y\":1},\n {\"lo\":1,\"hi\":2,\"z\":1}]", `t.json:2:21: record 2 has the key "z", which the first record lacks`},
		{`[{"lo":0,"hi":1,"y":1},{"lo":1,"hi":2}]`, `t.json:1:24: record 2 has 2 keys, the first has 3`},
		{`[{"lo":0,"hi":1,"lo":1}]`, `t.json:1:17: key "lo" given twice`},
		{`{"columns":["lo","hi"],"data":[[0,1]],"name":"x"}`, `unknown key "name" in a pandas split table`},
		{`{"columns":["lo","hi"],"data":[[0,1,2]]}`, `row 1 has 3 numbers, columns has 2`},
		{`{"lo":{"0":0,"1":1},"hi":{"0":1}}`, `"hi" has 1 entries, "lo" has 2`},
		{`{"lo":{"0":0},"hi":{"1":1}}`, `"hi" has the key "1", which "lo" lacks`},
		{`{"lo":{"0":0x1},"hi":{"0":1}}`, `t.json:1:14: invalid character 'x'`},
		{`[{"lo":0,"hi":1}`, `t.json:1:17: unexpected end of JSON input`},
		{`{"data":[[0,1]]}`, `needs "columns"`},
	} {
		_, err := ParseJSON("t.json", []byte(c.in), CSVOptions{})
		wantErr(t, err, c.want)
	}
}
