package events

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"tandem/compare/table"
)

func mustCSV(t *testing.T, name, s string) Source {
	t.Helper()
	tb, err := NewCSV(name, []byte(s))
	if err != nil {
		t.Fatal(err)
	}
	return tb
}

func refTables(t *testing.T) (Source, Source) {
	a, err := OpenCSV(filepath.Join(refDir, "events_a.csv"))
	if err != nil {
		t.Fatal(err)
	}
	b, err := OpenCSV(filepath.Join(refDir, "events_b.csv"))
	if err != nil {
		t.Fatal(err)
	}
	return a, b
}

// Blinding: the same affine map on both sides leaves which events agree
// and the cut flow unchanged, scales absolute differences by |s|, and no
// true value of a blinded variable reaches the summary.
func TestBlindedSync(t *testing.T) {
	ref := loadReference(t)
	a, b := refTables(t)
	plain, err := Sync(a, b, referenceOptions(ref))
	if err != nil {
		t.Fatal(err)
	}
	o := referenceOptions(ref)
	o.Blind = map[string]Affine{"energy": {S: 1.7320508, O: 123.25}, "angle": {S: -0.61, O: 4}}
	bl, err := Sync(a, b, o)
	if err != nil {
		t.Fatal(err)
	}
	for j := range plain.Stats {
		p, q := plain.Stats[j], bl.Stats[j]
		if p.Outside != q.Outside || p.Compared != q.Compared {
			t.Errorf("%s: outside %d blinded vs %d true", plain.Vars[j].Name, q.Outside, p.Outside)
		}
		if m, ok := o.Blind[plain.Vars[j].Name]; ok {
			if !near(q.MaxAbs.Value, math.Abs(m.S)*p.MaxAbs.Value, 1e-6) {
				t.Errorf("%s: blinded max |d| %v, want |s|·%v", plain.Vars[j].Name, q.MaxAbs.Value, p.MaxAbs.Value)
			}
			if !bl.Vars[j].Blinded {
				t.Errorf("%s not marked blinded", bl.Vars[j].Name)
			}
		}
	}
	if !reflect.DeepEqual(plain.Pairs, bl.Pairs) || !reflect.DeepEqual(plain.PassA, bl.PassA) {
		t.Error("cut flow changed under blinding")
	}
	// no true energy of a failing event appears among the blinded values
	truth := map[float64]bool{}
	all := collect(t, a, refLayout)
	for i := 0; i < all.N; i++ {
		truth[all.Vals[3*i]] = true
	}
	var buf bytes.Buffer
	WriteSummary(&buf, bl)
	for _, e := range bl.Worst {
		if truth[float64(e.A[0])] {
			t.Errorf("event %v: true energy %v in the blinded summary", e.Key, e.A[0])
		}
	}
}

// Partition summaries (here two run ranges) merge into exactly the summary
// of the whole.
func TestMergeEqualsWhole(t *testing.T) {
	ref := loadReference(t)
	a, b := refTables(t)
	whole, err := Sync(a, b, referenceOptions(ref))
	if err != nil {
		t.Fatal(err)
	}
	split := func(tb Source, low bool) Source {
		var sb strings.Builder
		all := collect(t, tb, Layout{Keys: []string{"run", "event"}, Vars: []string{"energy", "angle", "hits"}, Cuts: refLayout.Cuts})
		sb.WriteString("run,event,energy,angle,hits,trigger,quality,fiducial\n")
		for i := 0; i < all.N; i++ {
			if (all.Keys[2*i] < 103) != low {
				continue
			}
			c := all.Cuts[i]
			fmt.Fprintf(&sb, "%d,%d,%v,%v,%v,%d,%d,%d\n", all.Keys[2*i], all.Keys[2*i+1], all.Vals[3*i], all.Vals[3*i+1], all.Vals[3*i+2], c&1, c>>1&1, c>>2&1)
		}
		return mustCSV(t, tb.Name(), sb.String())
	}
	var parts []*Summary
	for _, low := range []bool{true, false} {
		s, err := Sync(split(a, low), split(b, low), referenceOptions(ref))
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := WriteSummary(&buf, s); err != nil {
			t.Fatal(err)
		}
		back, err := ReadSummary("part", buf.Bytes())
		if err != nil {
			t.Fatal(err)
		}
		parts = append(parts, back)
	}
	m, warns, err := Merge(parts, []string{"low", "high"})
	if err != nil || len(warns) != 0 {
		t.Fatal(err, warns)
	}
	m.Parts, m.Spilled = 1, whole.Spilled
	m.maxWorst, m.maxSample = whole.maxWorst, whole.maxSample
	for _, s := range []*Summary{whole, m} { // positions are lines of different files
		for i := range s.Worst {
			s.Worst[i].PosA, s.Worst[i].PosB = 0, 0
		}
	}
	var x, y bytes.Buffer
	WriteSummary(&x, whole)
	WriteSummary(&y, m)
	if x.String() != y.String() {
		t.Errorf("merged summary differs from the whole:\n%s\n---\n%s", y.String(), x.String())
	}
	// overlapping partitions are named
	if _, warns, _ := Merge([]*Summary{whole, parts[0]}, []string{"x", "y"}); len(warns) != 1 {
		t.Errorf("want one overlap warning, got %v", warns)
	}
	// the same summary twice, as one name or two, is refused
	var dup *DuplicateError
	for _, names := range [][]string{{"p1.json", "p1.json"}, {"p1.json", "copy.json"}} {
		if _, _, err := Merge([]*Summary{parts[0], parts[0]}, names); !errors.As(err, &dup) {
			t.Errorf("%v: merged the same summary twice (%v)", names, err)
		}
	}
}

func TestBadInput(t *testing.T) {
	keys := Options{Layout: Layout{Keys: []string{"run", "event"}}}
	good := "run,event,x\n1,1,0.5\n1,2,0.5\n"
	cases := []struct{ name, a, want string }{
		{"duplicate sorted", "run,event,x\n1,1,0\n1,2,0\n1,2,1\n", "a.csv:4: duplicate key run=1, event=2 (first at line 3)"},
		{"duplicate unsorted", "run,event,x\n1,5,0\n1,2,0\n1,5,1\n", "a.csv:4: duplicate key run=1, event=5 (first at line 2)"},
		{"not integer key", "run,event,x\n1,1,0\n1,2.5,0\n", "a.csv:3:3: key column \"event\": \"2.5\" is not an integer"},
		{"ragged", "run,event,x\n1,1,0\n1,2\n", "a.csv:3:4: row has 2 fields, header has 3"},
		{"bad number", "run,event,x\n1,1,0\n1,2,abc\n", "a.csv:3:5: column \"x\": cannot parse \"abc\" as a number"},
		{"binary", "run,event,x\n1,1,\x00\n", "a.csv:2:5: binary data"},
		{"missing key", "event,x\n1,0\n", "a.csv: no key column \"run\""},
		{"header only", "run,event,x\n", "a.csv:1: table has a header but no rows"},
	}
	for _, c := range cases {
		a, err := NewCSV("a.csv", []byte(c.a))
		if err == nil {
			_, err = Sync(a, mustCSV(t, "b.csv", good), keys)
		}
		var te *table.Error
		if err == nil || !strings.Contains(err.Error(), c.want) || !errors.As(err, &te) {
			t.Errorf("%s: got %v, want %q", c.name, err, c.want)
		}
	}
}

func TestHistogramBins(t *testing.T) {
	for _, c := range []struct {
		r    float64
		want int
	}{{0, 0}, {1e-17, 1}, {1e-16, 2}, {1.5e-16, 3}, {1, 2 + 160}, {2, 2 + 163}} {
		if got := histBin(c.r); got != c.want {
			t.Errorf("histBin(%v) = %d, want %d", c.r, got, c.want)
		}
		if c.want >= 2 && !(HistEdge(c.want) <= c.r*(1+1e-12) && c.r < HistEdge(c.want+1)) {
			t.Errorf("%v not in [%v, %v)", c.r, HistEdge(c.want), HistEdge(c.want+1))
		}
	}
}

// TestBatchFlush: rows added one by one reach fn in full batches of
// BatchRows, then one partial batch; an error from the scan or from fn
// stops the flushing.
func TestBatchFlush(t *testing.T) {
	var sizes []int
	var pos []int64
	fn := func(b *Batch) error {
		sizes = append(sizes, b.N)
		pos = append(pos, b.Pos...)
		return nil
	}
	b := &Batch{}
	const rows = 2*BatchRows + 3
	for i := range int64(rows) {
		b.Pos = append(b.Pos, i)
		if err := b.added(fn); err != nil {
			t.Fatal(err)
		}
	}
	if err := b.last(nil, fn); err != nil {
		t.Fatal(err)
	}
	if len(sizes) != 3 || sizes[0] != BatchRows || sizes[1] != BatchRows || sizes[2] != 3 || len(pos) != rows || pos[rows-1] != rows-1 {
		t.Errorf("batches %v, %d positions", sizes, len(pos))
	}
	stop := errors.New("stop")
	b = &Batch{N: 1}
	if err := b.last(stop, fn); err != stop || len(sizes) != 3 {
		t.Errorf("last after a failed scan: %v, %d batches", err, len(sizes))
	}
	b = &Batch{N: BatchRows - 1}
	if err := b.added(func(*Batch) error { return stop }); err != stop {
		t.Errorf("added did not return fn's error: %v", err)
	}
}

// TestReadSummaryLevels: a summary file is input, so an α or a confidence
// level outside (0, 1) is refused when it is read, before any test or
// interval uses it (a level of 5 once reached the Clopper–Pearson interval).
func TestReadSummaryLevels(t *testing.T) {
	data, err := os.ReadFile("testdata/summary/ref.json")
	if err != nil {
		t.Fatal(err)
	}
	s, err := ReadSummary("ref.json", data)
	if err != nil {
		t.Fatal(err)
	}
	alpha, cl := fmt.Sprintf(`"alpha": %v`, s.Alpha), fmt.Sprintf(`"cl": %v`, s.CL)
	if !bytes.Contains(data, []byte(alpha)) || !bytes.Contains(data, []byte(cl)) {
		t.Fatalf("ref.json does not hold %s and %s", alpha, cl)
	}
	for _, bad := range []string{`"alpha": 0`, `"alpha": 1`, `"alpha": -3`, `"cl": 0`, `"cl": 1`, `"cl": 5`} {
		old := alpha
		if strings.HasPrefix(bad, `"cl"`) {
			old = cl
		}
		edited := bytes.Replace(data, []byte(old), []byte(bad), 1)
		if _, err := ReadSummary("edited.json", edited); err == nil || !strings.Contains(err.Error(), "strictly between 0 and 1") {
			t.Errorf("%s: %v", bad, err)
		}
	}
}
