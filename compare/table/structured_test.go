package table

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
)

func TestStructuredLayouts(t *testing.T) {
	j := `{"format": "tandem/v1 table", "columns": ["lo", "hi", "rate", "stat"],
 "rows": [[0, 1, 5.0, 0.5],
          [1, 2, 6.0, 0.25]]}`
	to := "format = \"tandem/v1 table\"\ncolumns = [\"lo\", \"hi\", \"rate\", \"stat\"]\nrows = [\n  [0.0, 1.0, 5.0, 0.5],\n  [1.0, 2.0, 6.0, 0.25],\n]\n"
	c := "lo,hi,rate,stat\n0,1,5,0.5\n1,2,6,0.25\n"
	tj, err := ParseJSON("t.json", []byte(j), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tt, err := ParseTOML("t.toml", []byte(to), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tc, _ := ParseCSV("t.csv", []byte(c), CSVOptions{})
	ignore := cmp.FilterPath(func(p cmp.Path) bool {
		s := p.Last().String()
		return s == ".Source" || s == ".Lines" || s == ".FirstLine"
	}, cmp.Ignore())
	if diff := cmp.Diff(tc, tj, ignore); diff != "" {
		t.Errorf("JSON differs from CSV (-csv +json):\n%s", diff)
	}
	if diff := cmp.Diff(tc, tt, ignore); diff != "" {
		t.Errorf("TOML differs from CSV (-csv +toml):\n%s", diff)
	}
	if tj.Lines[1] != 3 || tt.Lines[1] != 5 {
		t.Errorf("row lines: json %v toml %v", tj.Lines, tt.Lines)
	}
}

func TestStructuredBad(t *testing.T) {
	for _, c := range []struct{ name, in, want string }{
		{"j.json", `{"columns": ["lo","hi","y"], "rows": [[0,1,2],[1,2]]}`, "j.json:1: row 2 has 2 numbers"},
		{"j.json", `{"columns": ["lo","hi","y"], "rows": [[0,1,"x"]]}`, "j.json:1:"},
		{"j.json", `{"columns": ["lo","hi","y"], "extra": 1, "rows": [[0,1,2]]}`, `unknown field "extra"`},
		{"j.json", "{\n  \"columns\": [\"lo\",\"hi\"\n", "j.json:3:"},
		{"j.json", ``, "empty table"},
		{"j.json", `{"columns": ["lo","hi","y"], "rows": [[1,0,2]]}`, "lower edge 1 is not below"},
		{"t.toml", "columns = [\"lo\",\"hi\",\"y\"]\nrows = [[0,1,nan]]\n", "NaN and infinities"},
		{"t.toml", "columns = [\"lo\",\"hi\",\"y\"]\nrows = [[0,1,2]]\nbogus = 3\n", `unknown key "bogus"`},
		{"t.toml", "columns = [\"lo\",\"hi\",\"y\"\n", "t.toml:"},
		{"t.toml", "format = \"other\"\ncolumns = [\"lo\",\"hi\",\"y\"]\nrows = [[0,1,2]]\n", "format is"},
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

func FuzzParseJSON(f *testing.F) {
	seeds, _ := filepath.Glob("testdata/seeds/*.json")
	if len(seeds) == 0 {
		f.Fatal("no JSON seeds")
	}
	for _, s := range seeds {
		d, _ := os.ReadFile(s)
		f.Add(d)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if tb, err := ParseJSON("f.json", data, CSVOptions{}); err == nil {
			if err := tb.Validate(); err != nil {
				t.Fatalf("accepted invalid table: %v", err)
			}
		}
	})
}

func FuzzParseTOML(f *testing.F) {
	seeds, _ := filepath.Glob("testdata/seeds/*.toml")
	if len(seeds) == 0 {
		f.Fatal("no TOML seeds")
	}
	for _, s := range seeds {
		d, _ := os.ReadFile(s)
		f.Add(d)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if tb, err := ParseTOML("f.toml", data, CSVOptions{}); err == nil {
			if err := tb.Validate(); err != nil {
				t.Fatalf("accepted invalid table: %v", err)
			}
		}
	})
}
