package events

import (
	"bytes"
	"errors"
	"strconv"
	"tandem/compare/fuzzseed"
	"testing"
)

// seeds adds every file matching glob to f, failing when none does.
func seeds(f *testing.F, glob string) {
	f.Helper()
	for _, data := range fuzzseed.Glob(f, glob) {
		f.Add(data)
	}
}

// syncSelf runs a table against itself: a valid table must agree with
// itself on every variable and cut.
func syncSelf(t *testing.T, tb Source) {
	cols, err := tb.Columns()
	if err != nil {
		return
	}
	var keys, cuts []string
	for _, c := range cols {
		switch {
		case c.Kind == Int && len(keys) < 2:
			keys = append(keys, c.Name)
		case c.Kind == Bool && len(cuts) < 3:
			cuts = append(cuts, c.Name)
		}
	}
	if len(keys) == 0 {
		return
	}
	s, err := Sync(tb, tb, Options{Layout: Layout{Keys: keys, Cuts: cuts}, TempDir: t.TempDir(), MemBudget: 1 << 16})
	if err != nil {
		return
	}
	r := Evaluate(s)
	if s.OnlyA != 0 || s.OnlyB != 0 {
		t.Fatalf("a table does not match itself: %d/%d unmatched", s.OnlyA, s.OnlyB)
	}
	for _, v := range r.Variables {
		if v.Outside != 0 {
			t.Fatalf("%s: %d events differ from themselves", v.Name, v.Outside)
		}
	}
	for _, st := range r.Steps {
		if st.OnlyA+st.OnlyB != 0 {
			t.Fatalf("cut %s differs from itself", st.Cut)
		}
	}
}

func FuzzCSV(f *testing.F) {
	seeds(f, "testdata/csv/*")
	f.Fuzz(func(t *testing.T, data []byte) {
		tb, err := NewCSV("fuzz.csv", data)
		if err != nil {
			return
		}
		syncSelf(t, tb)
	})
}

func FuzzParquet(f *testing.F) {
	seeds(f, "testdata/parquet/*.parquet")
	f.Fuzz(func(t *testing.T, data []byte) {
		tb, err := NewParquet("fuzz.parquet", data)
		if err != nil {
			return
		}
		syncSelf(t, tb)
	})
}

func FuzzSummary(f *testing.F) {
	seeds(f, "testdata/summary/*.json")
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := ReadSummary("fuzz.json", data)
		if err != nil {
			return
		}
		var dup *DuplicateError
		if _, _, err := Merge([]*Summary{s, s}, []string{"x", "y"}); !errors.As(err, &dup) {
			t.Fatalf("a summary merged with itself: %v", err)
		}
		m, _, err := Merge([]*Summary{s}, []string{"x"})
		if err != nil {
			t.Fatalf("a valid summary does not merge: %v", err)
		}
		r := Evaluate(m)
		var buf bytes.Buffer
		if err := r.WriteOverlapIfBinned(&buf); err != nil {
			t.Fatal(err)
		}
		if m.Common != s.Common || m.RowsA != s.RowsA {
			t.Fatal("merge of one summary changed its counts")
		}
	})
}

// FuzzParseFloat checks the fast decimal path against strconv.
func FuzzParseFloat(f *testing.F) {
	for _, s := range []string{"0", "-1.5", "123456789012345678", "1e22", "4.5e-7", "9007199254740993", ".5", "1e", "nan"} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		got, ok := parseFloat(b)
		want, err := strconv.ParseFloat(string(b), 64)
		if err != nil {
			if ne, isNum := err.(*strconv.NumError); isNum && ne.Err == strconv.ErrRange {
				return
			}
			if ok {
				t.Fatalf("%q: parsed %v, strconv refuses", b, got)
			}
			return
		}
		if !ok || (got != want && !(got != got && want != want)) {
			t.Fatalf("%q: %v %v, strconv %v", b, got, ok, want)
		}
	})
}
