package report

import (
	"bytes"
	"encoding/json"
	"io"
	"reflect"
	"strings"
	"testing"

	"tandem/compare"
	"tandem/compare/table"
)

// cellsSummary compares two 2-D tables of 3 × 2 cells whose second y band
// has its own x bins; cell 5 departs by 5σ.
func cellsSummary(t testing.TB) *Summary {
	t.Helper()
	opt := table.CSVOptions{Lo: "xlo", Hi: "xhi", YLo: "ylo", YHi: "yhi"}
	a, err := table.ParseCSV("a.csv", []byte("xlo,xhi,ylo,yhi,v,v_err\n0,1,0,1,10,1\n1,2,0,1,11,1\n2,4,0,1,12,1\n0,2,1,3,13,1\n2,3,1,3,30,1\n3,4,1,3,15,1\n"), opt)
	if err != nil {
		t.Fatal(err)
	}
	b, err := table.ParseCSV("b.csv", []byte("xlo,xhi,ylo,yhi,v,v_err\n0,1,0,1,10.5,1\n1,2,0,1,10.4,1\n2,4,0,1,12.2,1\n0,2,1,3,12.1,1\n2,3,1,3,22.9289,1\n3,4,1,3,15.3,1\n"), opt)
	if err != nil {
		t.Fatal(err)
	}
	o := compare.Defaults()
	o.MaxPull = 3
	rs, err := compare.Columns(a, b, []compare.Selection{{Value: "v", Errors: []string{"v_err"}}}, o)
	if err != nil {
		t.Fatal(err)
	}
	return &Summary{Title: "a vs b", Entries: []Entry{{Observable: "map", Files: [2]string{"a.csv", "b.csv"}, Result: rs[0]}}}
}

func TestCellsReports(t *testing.T) {
	s := cellsSummary(t)
	render := func(format string) string {
		var b bytes.Buffer
		if err := Render(&b, format, s, Style{}); err != nil {
			t.Fatal(err)
		}
		return b.String()
	}
	// JSON: "cells" beside "pulls", one per pull, and the hand-written
	// document equals encoding/json's.
	js := render("json")
	var ref bytes.Buffer
	if err := jsonReference(&ref, s); err != nil {
		t.Fatal(err)
	}
	if js != ref.String() {
		t.Errorf("JSON differs from encoding/json:\n%s\n%s", js, ref.String())
	}
	var doc struct {
		Observables []struct {
			Pulls []float64
			Cells []struct{ Xlo, Xhi, Ylo, Yhi float64 }
		}
	}
	if err := json.Unmarshal([]byte(js), &doc); err != nil {
		t.Fatal(err)
	}
	o := doc.Observables[0]
	if len(o.Cells) != 6 || len(o.Pulls) != 6 || o.Cells[4].Xlo != 2 || o.Cells[4].Xhi != 3 || o.Cells[4].Ylo != 1 || o.Cells[4].Yhi != 3 {
		t.Errorf("cells: %+v", o.Cells)
	}
	// The human tables give both coordinates of each cell, and the failing
	// tolerance names the cell's place.
	txt := render("text")
	for _, want := range []string{"cell  xlo  xhi  ylo  yhi", "(x 2 to 3, y 1 to 3) has pull 5", "over the cells in row-major order, x fastest"} {
		if !strings.Contains(txt, want) {
			t.Errorf("text report lacks %q:\n%s", want, txt)
		}
	}
	md := render("markdown")
	if !strings.Contains(md, "| cell | xlo | xhi | ylo | yhi |") || !strings.Contains(md, "| 5 | 2 | 3 | 1 | 3 |") {
		t.Errorf("markdown per-cell table:\n%s", md)
	}
	// HTML: the map (one rect per cell, the outlined cell beyond the
	// limit, the labelled scale) and one slice per y band.
	h := render("html")
	for _, want := range []string{`class="pullmap"`, "<title>cell 5: x 2 to 3, y 1 to 3, pull 5.00</title>", "pull (a − b) / σ_d",
		"slice y 0 to 1 (cells 1 to 3)", "slice y 1 to 3 (cells 4 to 6)", "<th>cell</th><th>xlo</th><th>xhi</th><th>ylo</th><th>yhi</th>"} {
		if !strings.Contains(h, want) {
			t.Errorf("HTML lacks %q", want)
		}
	}
	if n := strings.Count(h, "<title>cell "); n != 6 {
		t.Errorf("%d cells drawn in the map, want 6", n)
	}
	if strings.Count(h, `class="overlay"`) != 2 || strings.Contains(h, `class="pulls"`) {
		t.Error("2-D page should draw two slices and no 1-D pull panel")
	}
}

// TestPullColor: the palette's ends and middle, and its symmetry in
// distance from the middle colour.
func TestPullColor(t *testing.T) {
	for _, c := range []struct {
		p    float64
		want string
	}{{0, "#f6f1e7"}, {3, "#b54a12"}, {-3, "#2b4c7e"}, {9, "#b54a12"}, {-9, "#2b4c7e"}} {
		if got := pullColor(c.p, 3); got != c.want {
			t.Errorf("pullColor(%v) = %s, want %s", c.p, got, c.want)
		}
	}
	if pullColor(nanValue(), 3) != colorNoPull {
		t.Error("a cell without pull is not grey")
	}
}

func nanValue() float64 { var z float64; return z / z }

// jsonReference writes s through jsonEncoded (jsonref_test.go, the
// encoding/json reference) with the zero Style when it takes one: its
// parameters differ between lines of development, and this test serves
// both.
func jsonReference(w io.Writer, s *Summary) error {
	f := reflect.ValueOf(jsonEncoded)
	args := []reflect.Value{reflect.ValueOf(w), reflect.ValueOf(s)}
	for i := len(args); i < f.Type().NumIn(); i++ {
		args = append(args, reflect.Zero(f.Type().In(i)))
	}
	err, _ := f.Call(args)[0].Interface().(error)
	return err
}
