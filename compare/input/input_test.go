package input

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tandem/compare/table"
)

func TestStdin(t *testing.T) {
	dir := t.TempDir()
	b := filepath.Join(dir, "b.csv")
	if err := os.WriteFile(b, []byte("lo,hi,y\n0,1,3\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	ts, err := ReadAllFrom(strings.NewReader("\xef\xbb\xbflo,hi,y\n0,1,2\n"), table.CSVOptions{}, "-", b)
	if err != nil {
		t.Fatal(err)
	}
	if ts[0].Source != table.StdinName || ts[0].Column("y")[0] != 2 || ts[1].Column("y")[0] != 3 {
		t.Errorf("got %+v %+v", ts[0], ts[1])
	}
	if _, err := ReadAllFrom(strings.NewReader(""), table.CSVOptions{}, "-", "-"); err == nil || !strings.Contains(err.Error(), "read only once") {
		t.Errorf("twice: %v", err)
	}
	if _, err := ReadFrom("-", strings.NewReader(""), table.CSVOptions{}); err == nil || err.Error() != "standard input is empty" {
		t.Errorf("empty: %v", err)
	}
}

// TestBoundedFormats: a JSON or TOML name on the zero device is refused at
// once instead of read whole, and the size limit holds for every format.
func TestBoundedFormats(t *testing.T) {
	dir := t.TempDir()
	if _, err := os.Stat("/dev/zero"); err == nil {
		z := filepath.Join(dir, "z.json")
		if err := os.Symlink("/dev/zero", z); err != nil {
			t.Fatal(err)
		}
		if _, err := Read(z, table.CSVOptions{}); err == nil || !strings.Contains(err.Error(), "z.json:1:1: binary data") {
			t.Errorf("z.json: %v", err)
		}
	}
	lim := table.CSVOptions{Limits: table.Limits{MaxBytes: 16}}
	for name, body := range map[string]string{
		"t.json": `{"columns": ["lo", "hi", "y"], "rows": [[0, 1, 2]]}`,
		"t.toml": "columns = [\"lo\", \"hi\", \"y\"]\nrows = [[0, 1, 2]]\n",
		"t.csv":  "lo,hi,y\n0,1,2\n1,2,2\n",
	} {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		if _, err := Read(p, table.CSVOptions{}); err != nil {
			t.Errorf("%s: %v", name, err)
		}
		if _, err := Read(p, lim); err == nil || !strings.Contains(err.Error(), "larger than the limit of 16 bytes") {
			t.Errorf("%s: %v", name, err)
		}
	}
}
