package table

import (
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"tandem/compare/fuzzseed"
)

var cellOpt = CSVOptions{Lo: "xlo", Hi: "xhi", YLo: "ylo", YHi: "yhi"}

func TestCells(t *testing.T) {
	tb, err := ParseCSV("g.csv", []byte("ylo,yhi,xlo,xhi,value,err\n0,1,0,0.5,5,1\n0,1,0.5,2,6,1\n\n1,3,0,1,7,1\n1,3,1,2,8,1\n"), cellOpt)
	if err != nil {
		t.Fatal(err)
	}
	want := &Table{Source: "g.csv", LoName: "xlo", HiName: "xhi", YLoName: "ylo", YHiName: "yhi",
		Lo: []float64{0, 0.5, 0, 1}, Hi: []float64{0.5, 2, 1, 2}, YLo: []float64{0, 0, 1, 1}, YHi: []float64{1, 1, 3, 3},
		Names: []string{"value", "err"}, Cols: [][]float64{{5, 6, 7, 8}, {1, 1, 1, 1}}}
	if diff := cmp.Diff(want, tb, cmp.FilterPath(func(p cmp.Path) bool {
		s := p.String()
		return s == "Lines" || s == "FirstLine"
	}, cmp.Ignore())); diff != "" {
		t.Errorf("cells (-want +got):\n%s", diff)
	}
	// The canonical CSV puts the y edges after the x edges and reads back.
	var b strings.Builder
	if err := tb.WriteCSV(&b); err != nil {
		t.Fatal(err)
	}
	if got := b.String(); got != "xlo,xhi,ylo,yhi,value,err\n0,0.5,0,1,5,1\n0.5,2,0,1,6,1\n0,1,1,3,7,1\n1,2,1,3,8,1\n" {
		t.Errorf("canonical CSV:\n%s", got)
	}
	again, err := ParseCSV("g.csv", []byte(b.String()), cellOpt)
	if err != nil || SameEdges(tb, again, 0) != nil {
		t.Errorf("round trip: %v", err)
	}
	// JSON: the same cells.
	js, err := ParseJSON("g.json", []byte(`{"columns":["xlo","xhi","ylo","yhi","value","err"],"rows":[[0,0.5,0,1,5,1],[0.5,2,0,1,6,1],[0,1,1,3,7,1],[1,2,1,3,8,1]]}`), cellOpt)
	if err != nil {
		t.Fatal(err)
	}
	if err := SameEdges(tb, js, 0); err != nil {
		t.Errorf("JSON cells: %v", err)
	}
}

func TestCellsRefused(t *testing.T) {
	head := "xlo,xhi,ylo,yhi,value\n"
	for _, c := range []struct{ in, want string }{
		// a cell that straddles two bands overlaps the cells of the next
		{"0,1,0,2,5\n1,2,0,1,6\n", "c.csv:3: cell 2: y range [0, 1] starts with the cell before it, [0, 2], but ends elsewhere"},
		{"0,1,0,2,5\n1,2,1,3,6\n", "c.csv:3: cell 2: y range [1, 3] overlaps the band [0, 2] before it"},
		{"0,1,1,2,5\n0,1,0,1,6\n", "c.csv:3: cell 2: cells are not sorted by y"},
		{"1,2,0,1,5\n0,1,0,1,6\n", "c.csv:3: cell 2: cells of a y band are not sorted by x"},
		{"0,1.5,0,1,5\n1,2,0,1,6\n", "c.csv:3: cell 2: overlaps the previous cell in x (1 < 1.5)"},
		{"0,1,1,1,5\n", "c.csv:2: cell 1: lower y edge 1 is not below upper y edge 1"},
		{"1,1,0,1,5\n", "c.csv:2: cell 1: lower x edge 1 is not below upper x edge 1"},
	} {
		_, err := ParseCSV("c.csv", []byte(head+c.in), cellOpt)
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%q: got %v, want %s…", c.in, err, c.want)
		}
	}
	_, err := ParseCSV("c.csv", []byte("xlo,xhi,value\n0,1,5\n"), cellOpt)
	if e, ok := err.(*Error); !ok || e.Error() != `c.csv:1: no y-edge column "ylo" (columns: xlo, xhi, value)` || !strings.Contains(e.Hint, "--edges") {
		t.Errorf("missing y edge: %v", err)
	}
	if _, err := ParseCSV("c.csv", []byte(head+"0,1,0,1,5\n"), CSVOptions{Lo: "xlo", Hi: "xhi", YLo: "xlo", YHi: "yhi"}); err == nil {
		t.Error("x edge named as y edge accepted")
	}
}

func TestSameCells(t *testing.T) {
	a, err := ParseCSV("a.csv", []byte("xlo,xhi,ylo,yhi,v\n0,1,0,1,1\n1,2,0,1,2\n0,1,1,2,3\n"), cellOpt)
	if err != nil {
		t.Fatal(err)
	}
	b, err := ParseCSV("b.csv", []byte("xlo,xhi,ylo,yhi,v\n0,1,0,1,1\n1,2,0,1,2\n0,1,1,2.5,3\n"), cellOpt)
	if err != nil {
		t.Fatal(err)
	}
	if err := SameEdges(a, b, 1e-9); err == nil || err.Error() != "b.csv:4: cell 3: [0, 1] × [1, 2.5] differs from [0, 1] × [1, 2] in a.csv" {
		t.Errorf("differing cell: %v", err)
	}
	c, err := ParseCSV("c.csv", []byte("xlo,xhi,ylo,yhi,v\n0,1,0,1,1\n1,2,0,1,2\n"), cellOpt)
	if err != nil {
		t.Fatal(err)
	}
	if err := SameEdges(a, c, 1e-9); err == nil || err.Error() != "c.csv: has 2 cells but a.csv has 3" {
		t.Errorf("missing cell: %v", err)
	}
	one, err := ParseCSV("one.csv", []byte("xlo,xhi,v\n0,1,1\n1,2,2\n0,1,3\n"[:22]), CSVOptions{Lo: "xlo", Hi: "xhi"})
	if err != nil {
		t.Fatal(err)
	}
	if err := SameEdges(a, one, 1e-9); err == nil || !strings.Contains(err.Error(), "a.csv is a 2-D table (x and y edges) but one.csv is 1-D") {
		t.Errorf("2-D against 1-D: %v", err)
	}
}

func TestSplitEdges(t *testing.T) {
	for in, want := range map[string][]string{
		"lo,hi":              {"lo", "hi"},
		" xlo, xhi,ylo ,yhi": {"xlo", "xhi", "ylo", "yhi"},
		"lo":                 nil,
		"a,b,c":              nil,
		"a,b,a,c":            nil,
		"a,,c,d":             nil,
		"a,b,c,d,e,f":        nil,
	} {
		got, ok := SplitEdges(in)
		if ok != (want != nil) || !cmp.Equal(got, want) {
			t.Errorf("SplitEdges(%q) = %q, %v", in, got, ok)
		}
	}
}

// FuzzParseCells: 2-D tables never panic the CSV or JSON reader; an
// accepted CSV table keeps the cell order of Table.Is2D, no two cells
// overlap (checked against every other cell, not only the one before),
// and it survives a write/parse round trip unchanged. The edge names come from the fuzzed
// --edges value too.
func FuzzParseCells(f *testing.F) {
	for _, s := range fuzzseed.Load(f, "cells_*.cells") {
		f.Add(s, "xlo,xhi,ylo,yhi")
	}
	for _, s := range fuzzseed.Load(f, "cells_*.cellsjson") {
		f.Add(s, "xlo,xhi,ylo,yhi")
	}
	f.Add([]byte("a,b,c,d,v\n0,1,0,1,2\n"), "a,b,c,d")
	f.Fuzz(func(t *testing.T, data []byte, edges string) {
		names, ok := SplitEdges(edges)
		if !ok || len(names) != 4 {
			return
		}
		opt := CSVOptions{Lo: names[0], Hi: names[1], YLo: names[2], YHi: names[3]}
		// The JSON reader takes the same edges: a table or an *Error.
		if js, err := ParseJSON("fuzz.json", data, opt); err != nil {
			if _, ok := err.(*Error); !ok {
				t.Fatalf("JSON: error of type %T: %v", err, err)
			}
		} else if !js.Is2D() || js.Validate() != nil {
			t.Fatalf("JSON: accepted an invalid 2-D table: %v", js.Validate())
		}
		tb, err := ParseCSV("fuzz.csv", data, opt)
		if err != nil {
			if _, ok := err.(*Error); !ok {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		if !tb.Is2D() || tb.Validate() != nil {
			t.Fatalf("accepted an invalid 2-D table: %v", tb.Validate())
		}
		if tb.Len() <= 200 {
			for i := range tb.Lo {
				for j := i + 1; j < tb.Len(); j++ {
					if tb.Lo[i] < tb.Hi[j] && tb.Lo[j] < tb.Hi[i] && tb.YLo[i] < tb.YHi[j] && tb.YLo[j] < tb.YHi[i] {
						t.Fatalf("cells %d and %d overlap", i+1, j+1)
					}
				}
			}
		}
		var b strings.Builder
		if err := tb.WriteCSV(&b); err != nil {
			t.Fatal(err)
		}
		again, err := ParseCSV("again.csv", []byte(b.String()), opt)
		if err != nil {
			t.Fatalf("round trip failed: %v\n%s", err, b.String())
		}
		again.Source, again.Lines, again.FirstLine, again.Notes = tb.Source, tb.Lines, tb.FirstLine, tb.Notes
		if diff := cmp.Diff(tb, again); diff != "" {
			t.Fatalf("round trip changed the table (-first +second)\n%s", diff)
		}
	})
}
