package demo

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestKeysDirBeside(t *testing.T) {
	wd, _ := os.Getwd()
	for in, want := range map[string]string{
		"c":            "c.keys",
		"c/":           "c.keys",
		"/tmp/x/camp":  "/tmp/x/camp.keys",
		"/tmp/x/camp/": "/tmp/x/camp.keys",
		"a/../b":       "b.keys",
		".":            filepath.Join(filepath.Dir(wd), filepath.Base(wd)+".keys"),
	} {
		if got := KeysDir(in); got != want {
			t.Errorf("KeysDir(%q) = %q, want %q", in, got, want)
		}
	}
	if got := TablesDir("/tmp/x/camp"); got != "/tmp/x/camp.tables" {
		t.Errorf("TablesDir: %q", got)
	}
}

// TestRunKeepsKeysOutside: a demo stopped before seal writes its keys and
// tables beside the campaign folder, lists the commands left, and puts
// no private key inside the folder.
func TestRunKeepsKeysOutside(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "c")
	res, err := Run(dir, Options{StopBefore: "seal"})
	if err != nil {
		t.Fatal(err)
	}
	if res.Keys != dir+".keys" || res.Tables != dir+".tables" {
		t.Errorf("result %+v", res)
	}
	for _, f := range []string{KeyFile(dir, "heron"), KeyFile(dir, "custodian"), KeyFile(dir, "custodian") + ".pub", IdentityFile(dir), filepath.Join(res.Tables, "otter", "zenith.csv")} {
		if _, err := os.Stat(f); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	if fi, err := os.Stat(res.Keys); err != nil || fi.Mode().Perm() != 0o700 {
		t.Errorf("keys folder mode: %v %v", fi, err)
	}
	filepath.Walk(dir, func(p string, fi os.FileInfo, err error) error {
		if err == nil && !fi.IsDir() {
			data, _ := os.ReadFile(p)
			if strings.Contains(string(data), "PRIVATE KEY") || strings.Contains(string(data), "AGE-SECRET-KEY") {
				t.Errorf("%s holds a secret", p)
			}
		}
		return nil
	})
	var first []string
	for _, c := range res.Next {
		first = append(first, c.Args[1])
	}
	if got := strings.Join(first, " "); got != "seal seal blind compare report sign sign sign unblind verify" {
		t.Errorf("commands left: %s", got)
	}
	// the same names again are refused before anything is written
	if _, err := Run(dir, Options{StopBefore: "seal"}); err == nil {
		t.Error("a second demo in the same folder")
	}
	other := filepath.Join(t.TempDir(), "d")
	os.MkdirAll(other+".keys", 0o700)
	os.WriteFile(filepath.Join(other+".keys", "x"), []byte("x"), 0o600)
	if _, err := Run(other, Options{}); err == nil || !strings.Contains(err.Error(), "d.keys exists and is not empty") {
		t.Errorf("a used keys folder: %v", err)
	}
	if _, err := os.Stat(other); err == nil {
		t.Error("the refused demo wrote its folder")
	}
}
