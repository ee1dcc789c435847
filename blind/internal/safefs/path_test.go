package safefs

import (
	"errors"
	"path/filepath"
	"strings"
	"tandem/compare/fuzzseed"
	"testing"
)

func TestSplit(t *testing.T) {
	for _, c := range []struct {
		rel   string
		comps []string
		kind  error
	}{
		{".", nil, nil},
		{"ledger", []string{"ledger"}, nil},
		{"sealed/heron/flux.age", []string{"sealed", "heron", "flux.age"}, nil},
		{".tandem.lock", []string{".tandem.lock"}, nil},
		{"a..b/c", []string{"a..b", "c"}, nil},
		{"", nil, ErrInvalidPath},
		{"..", nil, ErrEscape},
		{"../x", nil, ErrEscape},
		{"a/../../x", nil, ErrEscape},
		{"a/..", nil, ErrEscape},
		{"/etc/passwd", nil, ErrEscape},
		{"a//b", nil, ErrInvalidPath},
		{"a/", nil, ErrInvalidPath},
		{"./a", nil, ErrInvalidPath},
		{"a/./b", nil, ErrInvalidPath},
		{`a\b`, nil, ErrInvalidPath},
		{`..\x`, nil, ErrInvalidPath},
		{"a\x00b", nil, ErrInvalidPath},
	} {
		comps, err := split("read", c.rel)
		if c.kind == nil {
			if err != nil || strings.Join(comps, "/") != strings.Join(c.comps, "/") || len(comps) != len(c.comps) {
				t.Errorf("split(%q) = %q, %v; want %q", c.rel, comps, err, c.comps)
			}
			continue
		}
		if !errors.Is(err, c.kind) {
			t.Errorf("split(%q): err %v, want kind %v", c.rel, err, c.kind)
			continue
		}
		var e *Error
		if !errors.As(err, &e) || e.Path != c.rel || e.Op != "read" {
			t.Errorf("split(%q): error %#v does not name the path", c.rel, err)
		}
	}
}

// seeds reads the seed files matching pattern and fails when there are
// none, so a moved folder cannot silently empty the corpus.
func seeds(f *testing.F, pattern string) [][]byte {
	f.Helper()
	return fuzzseed.Load(f, pattern)
}

// FuzzRelPath: an accepted relative path is local by the standard
// library's own definition (filepath.IsLocal, which rejects "..", absolute
// and reserved names), splits into clean components that join back to it,
// and every refusal is an *Error of a known kind naming the path.
func FuzzRelPath(f *testing.F) {
	for _, s := range seeds(f, "relpath-*") {
		f.Add(string(s))
	}
	f.Fuzz(func(t *testing.T, rel string) {
		comps, err := split("fuzz", rel)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || e.Path != rel {
				t.Fatalf("split(%q): %v is not an *Error naming the path", rel, err)
			}
			if !errors.Is(err, ErrEscape) && !errors.Is(err, ErrInvalidPath) {
				t.Fatalf("split(%q): unexpected kind in %v", rel, err)
			}
			return
		}
		if rel == "." {
			if comps != nil {
				t.Fatalf(`split(".") = %q`, comps)
			}
			return
		}
		if !filepath.IsLocal(rel) {
			t.Fatalf("accepted %q, which filepath.IsLocal rejects", rel)
		}
		if strings.Join(comps, "/") != rel {
			t.Fatalf("split(%q) = %q does not join back", rel, comps)
		}
		for _, c := range comps {
			if c == "" || c == "." || c == ".." || strings.ContainsAny(c, "/\\\x00") {
				t.Fatalf("split(%q) gave component %q", rel, c)
			}
		}
	})
}

func TestErrorMessages(t *testing.T) {
	e := &Error{Op: "write", Path: "reports/final.txt", Link: "reports", Kind: ErrSymlink}
	if got, want := e.Error(), "write reports/final.txt: reports is a symbolic link, and symbolic links are refused inside the campaign"; got != want {
		t.Errorf("got %q\nwant %q", got, want)
	}
	e = &Error{Op: "read", Path: "x\u202ey", Kind: ErrTooLarge}
	if got := e.Error(); !strings.Contains(got, `"x\u202ey"`) {
		t.Errorf("a bidirectional override in the path is shown raw: %q", got)
	}
}
