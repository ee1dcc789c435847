package rootfile

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
)

// The ROOT files these tests read are go-hep's own test files, read where
// the Go module cache keeps them (go-hep.org/x/hep v0.36.0, BSD-3-Clause);
// nothing of them is copied into this repository. Each test names the file
// inside the module that it reads.

var gohepDir = sync.OnceValues(func() (string, error) {
	out, err := exec.Command("go", "list", "-m", "-f", "{{.Dir}}", "go-hep.org/x/hep").Output()
	if err != nil {
		if ee, ok := err.(*exec.ExitError); ok {
			return "", &os.PathError{Op: "go list -m go-hep.org/x/hep", Path: strings.TrimSpace(string(ee.Stderr)), Err: err}
		}
		return "", err
	}
	dir := strings.TrimSpace(string(out))
	if dir == "" {
		return "", os.ErrNotExist
	}
	return dir, nil
})

// gohep returns the path of rel inside the go-hep module, skipping the test
// when the module is not in the cache (failing instead under
// TANDEM_REQUIRE_TOOLS=1, set by .ci/run).
func gohep(tb testing.TB, rel string) string {
	tb.Helper()
	dir, err := gohepDir()
	if err == nil {
		p := filepath.Join(dir, filepath.FromSlash(rel))
		if _, err = os.Stat(p); err == nil {
			return p
		}
	}
	msg := "go-hep's test file " + rel + " is not available from the module cache (go list -m -f '{{.Dir}}' go-hep.org/x/hep): " + err.Error()
	if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
		tb.Fatal(msg)
	}
	tb.Skip(msg)
	return ""
}

// The go-hep files used, by their place in the module.
const (
	gaussH1   = "hbook/rootcnv/testdata/gauss-h1.root"     // written by ROOT with make-root-h1.py beside it
	gaussData = "hbook/rootcnv/testdata/gauss-1d-data.dat" // the (x, weight) pairs that script filled
	gaussH2   = "hbook/rootcnv/testdata/gauss-h2.root"     // TH2D/TH2F written by ROOT with make-root-h2.py beside it
	gauss2D   = "hbook/rootcnv/testdata/gauss-2d-data.dat" // the (x, y, weight) rows that script filled
	graphs    = "groot/testdata/graphs.root"               // TGraph, TGraphErrors, TGraphAsymmErrors written by ROOT
	dirs      = "groot/testdata/dirs-6.14.00.root"         // nested directories, ROOT 6.14.00
	flatTree  = "groot/testdata/x-flat-tree.root"          // TTree "tree"; values documented in groot/rtree/reader_test.go
	smallTree = "groot/testdata/small-flat-tree.root"      // TTree "tree", small event file
)
