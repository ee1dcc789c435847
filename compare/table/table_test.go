package table

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
)

func TestParseCSVGood(t *testing.T) {
	in := "# a comment\n\nlo, hi ,rate,rate_stat\r\n0,1,5,0.5\n  # indented comment\n1.5,2,6e0,0.25\n"
	got, err := ParseCSV("t.csv", []byte(in), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := &Table{Source: "t.csv", LoName: "lo", HiName: "hi", Lo: []float64{0, 1.5}, Hi: []float64{1, 2},
		Names: []string{"rate", "rate_stat"}, Cols: [][]float64{{5, 6}, {0.5, 0.25}}, Lines: []int32{4, 6}}
	if diff := cmp.Diff(want, got); diff != "" {
		t.Errorf("(-want +got)\n%s", diff)
	}
	sels := DefaultSelections(got)
	if diff := cmp.Diff([]Selection{{Value: "rate", Errors: []string{"rate_stat"}}}, sels); diff != "" {
		t.Errorf("selections (-want +got)\n%s", diff)
	}
	tsv, err := ParseCSV("t.tsv", []byte("lo\thi\ty\terr\n0\t1\t2\t0.1\n"), CSVOptions{})
	if err != nil || tsv.Column("y")[0] != 2 {
		t.Fatalf("tsv: %v %v", tsv, err)
	}
}

// TestParseCSVBad checks that each kind of bad input is refused with the
// right position.
func TestParseCSVBad(t *testing.T) {
	cases := []struct {
		name, in, want string
	}{
		{"empty", "", "t.csv: empty table: no header row"},
		{"comments only", "# x\n\n", "t.csv: empty table"},
		{"header only", "lo,hi,y\n", "t.csv: table has a header but no bins"},
		{"binary", "lo,hi,y\n0,1,\x00\n", "t.csv:2:5: binary data"},
		{"utf8", "lo,hi,y\n0,1,\xff\n", "t.csv:2:5: invalid UTF-8"},
		{"ragged short", "lo,hi,y\n0,1\n", "t.csv:2:4: row has 2 fields, header has 3"},
		{"ragged long", "lo,hi,y\n0,1,2,3\n", "t.csv:2:7: row has 4 fields"},
		{"bad number", "lo,hi,y\n0,1,abc\n", `t.csv:2:5: column "y": cannot parse "abc"`},
		{"empty field", "lo,hi,y\n0,1, \n", `t.csv:2:6: column "y": empty field`},
		{"nan", "lo,hi,y\n0,1,NaN\n", "t.csv:2:5: column \"y\": NaN and infinities"},
		{"inf", "lo,hi,y\n0,1,-Inf\n", "NaN and infinities"},
		{"range", "lo,hi,y\n0,1,1e999\n", "out of range"},
		{"dup column", "lo,hi,y,y\n", `t.csv:1:9: duplicate column "y" (first at column 7)`},
		{"missing edge", "lo,top,y\n0,1,2\n", `t.csv:1:1: missing bin-edge column "hi"`},
		{"empty name", "lo,hi,,y\n", "t.csv:1:7: empty column name"},
		{"inverted bin", "lo,hi,y\n1,1,2\n", "t.csv:2: bin 1: lower edge 1 is not below upper edge 1"},
		{"unsorted", "lo,hi,y\n2,3,1\n0,1,1\n", "t.csv:3: bin 2: bins are not sorted"},
		{"overlap", "lo,hi,y\n0,2,1\n1,3,1\n", "t.csv:3: bin 2: overlaps the previous bin"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseCSV("t.csv", []byte(c.in), CSVOptions{})
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("got %v, want %q", err, c.want)
			}
		})
	}
	// gaps are fine
	if _, err := ParseCSV("t.csv", []byte("lo,hi,y\n0,1,1\n2,3,1\n"), CSVOptions{}); err != nil {
		t.Errorf("gap refused: %v", err)
	}
}

func TestNegativeUncertainty(t *testing.T) {
	tb, err := ParseCSV("t.csv", []byte("lo,hi,y,y_err\n0,1,1,0.1\n1,2,1,-0.1\n"), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	_, err = tb.Series(DefaultSelections(tb)[0])
	if err == nil || !strings.Contains(err.Error(), `t.csv:3: bin 2: uncertainty "y_err" is negative`) {
		t.Errorf("got %v", err)
	}
}

func TestSameEdges(t *testing.T) {
	a, _ := ParseCSV("a.csv", []byte("lo,hi,y\n0,1,1\n1,2,1\n"), CSVOptions{})
	b, _ := ParseCSV("b.csv", []byte("lo,hi,y\n0,1.0000000001,1\n1.0000000001,2,1\n"), CSVOptions{})
	if err := SameEdges(a, b, 1e-9); err != nil {
		t.Errorf("within tolerance: %v", err)
	}
	c, _ := ParseCSV("c.csv", []byte("lo,hi,y\n0,1,1\n1,2.001,1\n"), CSVOptions{})
	if err := SameEdges(a, c, 1e-9); err == nil || !strings.Contains(err.Error(), "c.csv:3: bin 2: edges") {
		t.Errorf("got %v", err)
	}
}

func TestParseMatrix(t *testing.T) {
	m, err := ParseMatrix("m.csv", []byte("# cov\n1,0.5\n0.5,2\n"), 2, true)
	if err != nil || m[1][0] != 0.5 {
		t.Fatalf("%v %v", m, err)
	}
	for _, c := range []struct{ in, want string }{
		{"1,0.5\n0.4,2\n", "not symmetric"},
		{"1,0.5\n", "matrix has 1 rows, want 2"},
		{"1,0.5,3\n0.5,2,1\n", "m.csv:1: row has 3 entries, want 2"},
		{"1,x\n", "m.csv:1:3: cannot parse"},
		{"-1,0\n0,1\n", "negative variance"},
	} {
		if _, err := ParseMatrix("m.csv", []byte(c.in), 2, true); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: got %v, want %q", c.in, err, c.want)
		}
	}
}

// FuzzParseCSV: the parser never panics, and whatever it accepts is a valid
// table that survives a write/parse round trip unchanged.
func FuzzParseCSV(f *testing.F) {
	seeds, _ := filepath.Glob("testdata/seeds/*.csv")
	if len(seeds) == 0 {
		f.Fatal("no seed tables in testdata/seeds")
	}
	for _, s := range seeds {
		data, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		tb, err := ParseCSV("fuzz.csv", data, CSVOptions{})
		// Blocks of single lines, parsed in parallel, give the same
		// table or the same error as one block.
		small, serr := parse("fuzz.csv", bytes.NewReader(data), int64(len(data)), CSVOptions{}, 1)
		if fmt.Sprint(err) != fmt.Sprint(serr) {
			t.Fatalf("one block: %v\nline blocks: %v", err, serr)
		}
		if err == nil {
			if diff := cmp.Diff(tb, small); diff != "" {
				t.Fatalf("line blocks differ (-one +lines)\n%s", diff)
			}
		}
		// Read as from a pipe (size unknown: slabs joined at the end),
		// the same table or error again.
		piped, perr := parse("fuzz.csv", readerOnly{bytes.NewReader(data)}, 0, CSVOptions{}, 7)
		if fmt.Sprint(err) != fmt.Sprint(perr) {
			t.Fatalf("one block: %v\npiped: %v", err, perr)
		}
		if err == nil {
			if diff := cmp.Diff(tb, piped); diff != "" {
				t.Fatalf("piped reading differs (-file +pipe)\n%s", diff)
			}
		}
		if err != nil {
			if _, ok := err.(*Error); !ok {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		if err := tb.Validate(); err != nil {
			t.Fatalf("accepted an invalid table: %v", err)
		}
		var b strings.Builder
		if err := tb.WriteCSV(&b); err != nil {
			t.Fatal(err)
		}
		again, err := ParseCSV("again.csv", []byte(b.String()), CSVOptions{})
		if err != nil {
			t.Fatalf("round trip failed: %v\n%s", err, b.String())
		}
		again.Source, again.Lines, again.FirstLine, again.Notes = tb.Source, tb.Lines, tb.FirstLine, tb.Notes
		if diff := cmp.Diff(tb, again); diff != "" {
			t.Fatalf("round trip changed the table (-first +second)\n%s", diff)
		}
	})
}

func FuzzParseMatrix(f *testing.F) {
	seeds, _ := filepath.Glob("testdata/seeds/*.mat")
	if len(seeds) == 0 {
		f.Fatal("no seed matrices in testdata/seeds")
	}
	for _, s := range seeds {
		data, _ := os.ReadFile(s)
		f.Add(data, true)
	}
	f.Fuzz(func(t *testing.T, data []byte, sym bool) {
		m, err := ParseMatrix("fuzz.mat", data, 0, sym)
		if err != nil {
			return
		}
		for _, r := range m {
			if len(r) != len(m) {
				t.Fatalf("accepted a non-square matrix: %v", m)
			}
		}
	})
}

func ExampleParseCSV() {
	tb, err := ParseCSV("heron.csv", []byte("lo,hi,rate,rate_stat\n0,1,5,0.5\n1,2,6,0.25\n"), CSVOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(tb.Len(), tb.Names, DefaultSelections(tb))
	// Output: 2 [rate rate_stat] [{rate [rate_stat] [] []}]
}

// TestLineNumbers: bins keep their source lines whether or not comments
// sit between the rows.
func TestLineNumbers(t *testing.T) {
	for _, c := range []struct {
		in   string
		want []int
	}{
		{"lo,hi,y\n0,1,1\n1,2,1\n2,3,1\n", []int{2, 3, 4}},
		{"# c\nlo,hi,y\n0,1,1\n\n1,2,1\n# c\n2,3,1\n", []int{3, 5, 7}},
		{"lo,hi,y\n0,1,1\n1,2,1\n# late comment\n2,3,1\n", []int{2, 3, 5}},
	} {
		tb, err := ParseCSV("t.csv", []byte(c.in), CSVOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for i, w := range c.want {
			if got := tb.line(i); got != w {
				t.Errorf("%q: bin %d on line %d, want %d", c.in, i, got, w)
			}
		}
	}
}

// TestEdgeReuse: a lower edge written as the same text as the upper edge
// before it is taken without parsing; every other spelling is parsed. The
// edges read must be exactly strconv's values of their own text, in either
// column order, with blanks, gaps, and rows split over blocks of any size.
func TestEdgeReuse(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 2))
	for trial := 0; trial < 200; trial++ {
		hiFirst := trial%2 == 1
		var sb strings.Builder
		if hiFirst {
			sb.WriteString("hi,y,lo,e\n")
		} else {
			sb.WriteString("lo,hi,y,e\n")
		}
		var wantLo, wantHi []float64
		x := rng.Float64()
		prevText := strconv.FormatFloat(x, 'g', -1, 64)
		for r := 0; r < 50; r++ {
			loText := prevText
			switch rng.IntN(5) {
			case 0: // the same value, written otherwise
				loText = strconv.FormatFloat(x, 'e', 18, 64)
			case 1: // blanks around it
				loText = " " + prevText + " "
			case 2: // a gap: another value
				x += rng.Float64()
				loText = strconv.FormatFloat(x, 'g', 17, 64)
			}
			lo, _ := strconv.ParseFloat(strings.TrimSpace(loText), 64)
			x = lo + 0.5 + rng.Float64()
			hiText := strconv.FormatFloat(x, 'g', -1, 64)
			if rng.IntN(4) == 0 {
				hiText = strconv.FormatFloat(x, 'e', 18, 64)
			}
			hi, _ := strconv.ParseFloat(hiText, 64)
			wantLo, wantHi = append(wantLo, lo), append(wantHi, hi)
			if hiFirst {
				fmt.Fprintf(&sb, "%s,1,%s,0.1\n", hiText, loText)
			} else {
				fmt.Fprintf(&sb, "%s,%s,1,0.1\n", loText, hiText)
			}
			prevText = hiText
		}
		for _, target := range []int{1, 7, 100, blockBytes} {
			data := []byte(sb.String())
			tb, err := parse("edges.csv", bytes.NewReader(data), int64(len(data)), CSVOptions{}, target)
			if err != nil {
				t.Fatalf("trial %d, blocks of %d: %v\n%s", trial, target, err, data)
			}
			if !slices.Equal(tb.Lo, wantLo) || !slices.Equal(tb.Hi, wantHi) {
				t.Fatalf("trial %d, blocks of %d: edges differ from strconv's\n%s", trial, target, data)
			}
		}
	}
}
