package events

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"strings"
	"testing"
)

// The unsorted path gives the same summary as the sorted one: tables
// written in key order and in a shuffled order, in memory and spilled to
// disk, with keys whose ranges pack into one word (radix sort) and keys
// spanning the whole int64 range (comparison sort), negative keys too.
func TestShuffledEqualsSorted(t *testing.T) {
	defer func(m int64) { loadMargin = m }(loadMargin)
	for _, wide := range []bool{false, true} {
		rng := rand.New(rand.NewPCG(3, uint64(len(fmt.Sprint(wide)))))
		type row struct {
			run, ev int64
			x       float64
			c1, c2  int
		}
		var rows [2][]row
		for i := 0; i < 3000; i++ {
			run, ev := int64(rng.IntN(7))-3, int64(i)*5
			if wide {
				run, ev = int64(rng.Uint64()), int64(rng.Uint64())
			}
			x := rng.NormFloat64()
			c1, c2 := rng.IntN(2), rng.IntN(2)
			if rng.IntN(10) != 0 {
				rows[0] = append(rows[0], row{run, ev, x, c1, c2})
			}
			if rng.IntN(10) != 0 {
				if rng.IntN(20) == 0 {
					x += 1e-3
				}
				if rng.IntN(30) == 0 {
					c2 = 1 - c2
				}
				rows[1] = append(rows[1], row{run, ev, x, c1, c2})
			}
		}
		text := func(rs []row) string {
			var b strings.Builder
			b.WriteString("run,event,x,c1,c2\n")
			for _, r := range rs {
				fmt.Fprintf(&b, "%d,%d,%v,%d,%d\n", r.run, r.ev, r.x, r.c1, r.c2)
			}
			return b.String()
		}
		sortRows := func(rs []row) {
			slices.SortStableFunc(rs, func(x, y row) int { return compareKeys([]int64{x.run, x.ev}, []int64{y.run, y.ev}) })
		}
		o := Options{Layout: Layout{Keys: []string{"run", "event"}, Cuts: []string{"c1", "c2"}}, Sample: 5, Worst: 5}
		var sorted [2]string
		for side := range rows {
			sortRows(rows[side])
			sorted[side] = text(rows[side])
		}
		want, err := Sync(mustCSV(t, "a.csv", sorted[0]), mustCSV(t, "b.csv", sorted[1]), o)
		if err != nil {
			t.Fatal(err)
		}
		if want.Spilled {
			t.Fatal("sorted tables took the unsorted path")
		}
		for side := range rows {
			rng.Shuffle(len(rows[side]), func(i, j int) { rows[side][i], rows[side][j] = rows[side][j], rows[side][i] })
		}
		for _, budget := range []int64{0, 1 << 12, -1} {
			o.MemBudget, o.TempDir = budget, t.TempDir()
			if budget == -1 { // spill, then spill what is still held before the merge
				o.MemBudget = 1 << 12
				loadMargin = -1 << 40
			}
			got, err := Sync(mustCSV(t, "a.csv", text(rows[0])), mustCSV(t, "b.csv", text(rows[1])), o)
			if err != nil {
				t.Fatal(err)
			}
			if !got.Spilled || (budget != 0) != (got.SpilledBytes > 0) {
				t.Errorf("wide %v, budget %d: spilled %v, %d bytes", wide, budget, got.Spilled, got.SpilledBytes)
			}
			if all := (got.RowsA + got.RowsB) * 8 * (2 + 1 + 2); budget == -1 && got.SpilledBytes != all {
				t.Errorf("wide %v: %d bytes spilled, want every row's %d", wide, got.SpilledBytes, all)
			}
			got.Spilled, got.SpilledBytes = false, 0
			for _, s := range []*Summary{got, want} { // line numbers differ with the order
				for i := range s.Worst {
					s.Worst[i].PosA, s.Worst[i].PosB = 0, 0
				}
			}
			if !reflect.DeepEqual(got, want) {
				t.Errorf("wide %v, budget %d: shuffled tables give another summary:\n%+v\nwant\n%+v", wide, budget, got, want)
			}
		}
	}
}

// The packed radix sort orders like the comparison of the keys.
func TestSortKeysPacked(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 9))
	for _, span := range []int64{1, 2, 255, 256, 1 << 20, math.MaxInt32} {
		n, nk := 2000, 2
		keys := make([]int64, n*nk)
		for i := range keys {
			keys[i] = rng.Int64N(span) - span/2
		}
		ld := &loader{}
		order := ld.sortKeys(keys, nk, n)
		for i := 1; i < n; i++ {
			x, y := int(order[i-1]), int(order[i])
			c := compareKeys(keys[x*nk:(x+1)*nk], keys[y*nk:(y+1)*nk])
			if c > 0 || (c == 0 && x > y) {
				t.Fatalf("span %d: rows %d and %d out of order", span, x, y)
			}
		}
	}
}

// Quantiles read from the histogram bound the exact quantile (the k-th
// smallest value, k = ⌈q·n⌉, the "inverted CDF" definition, method 1 of
// Hyndman and Fan 1996) from above by at most one bin width, and never
// leave [smallest, largest]: the old rule read r99 = 1.259 with a largest
// value of 1.
func TestQuantileWithinRange(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 4))
	for trial := 0; trial < 300; trial++ {
		n := 1 + rng.IntN(400)
		rs := make([]float64, n)
		for i := range rs {
			switch rng.IntN(5) {
			case 0:
				rs[i] = 0
			case 1:
				rs[i] = 1 // one side 0, the other not
			default:
				rs[i] = math.Pow(10, -17+17*rng.Float64())
			}
			if trial%7 == 0 {
				rs[i] = rs[0] // all alike
			}
		}
		h := make([]int64, HistBins+2)
		for _, r := range rs {
			h[histBin(r)]++
		}
		sorted := slices.Clone(rs)
		slices.Sort(sorted)
		lo, hi := sorted[0], sorted[n-1]
		for _, q := range append(QuantileLevels, 0.01, 1) {
			got := Quantile(h, q, hi)
			exact := sorted[max(1, int(math.Ceil(q*float64(n))))-1]
			if got > hi || got < lo {
				t.Fatalf("trial %d, q %v: %v outside [%v, %v]", trial, q, got, lo, hi)
			}
			if got < exact || (exact > 1e-16 && got > exact*math.Pow(10, 1.0/HistPerDecade)*(1+1e-12)) {
				t.Fatalf("trial %d, q %v: %v, exact %v", trial, q, got, exact)
			}
		}
	}
	if q := Quantile(make([]int64, HistBins+2), 0.5, 0); !math.IsNaN(q) {
		t.Errorf("empty histogram: %v, want NaN", q)
	}
}

// Boolean columns are variables and cuts in every spelling the usual
// writers use (pandas True/False, R TRUE/FALSE, T/F, 1/0, lower case), and
// are compared, not dropped: the same flags spelt differently agree, a
// flipped flag is outside tolerance.
func TestBooleanSpellings(t *testing.T) {
	a := "run,event,flag,sel\n1,1,True,TRUE\n1,2,False,T\n1,3,true,1\n1,4,FALSE,f\n"
	b := "run,event,flag,sel\n1,1,1,t\n1,2,F,true\n1,3,T,True\n1,4,1,0\n"
	s, err := Sync(mustCSV(t, "a.csv", a), mustCSV(t, "b.csv", b), Options{Layout: Layout{Keys: []string{"run", "event"}, Cuts: []string{"sel"}}})
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Vars) != 1 || s.Vars[0].Name != "flag" {
		t.Fatalf("variables %v, want the boolean column flag", s.Vars)
	}
	if st := s.Stats[0]; st.Compared != 4 || st.Outside != 1 || st.MaxAbs.Value != 1 || !slices.Equal(st.MaxAbs.Key, []int64{1, 4}) {
		t.Errorf("flag: %+v, want 1 of 4 outside at event 4", st)
	}
	r := Evaluate(s)
	if st := r.Steps[0]; st.A != 3 || st.B != 3 || st.Both != 3 {
		t.Errorf("cut sel: %+v", st)
	}
	for _, bad := range []string{"yes", "tru", "2"} {
		_, err := Sync(mustCSV(t, "a.csv", a), mustCSV(t, "b.csv", strings.Replace(b, ",true\n", ","+bad+"\n", 1)), Options{Layout: Layout{Keys: []string{"run", "event"}, Cuts: []string{"sel"}}})
		if err == nil || !strings.Contains(err.Error(), "b.csv:3:7: cut column \"sel\"") {
			t.Errorf("cut %q: %v", bad, err)
		}
	}
}

// Progress is reported while the tables are read and while the
// partitions are merged, never concurrently.
func TestProgress(t *testing.T) {
	defer func(n int64) { progressRows = n }(progressRows)
	progressRows = 500
	var b strings.Builder
	b.WriteString("run,event,x\n")
	for i := 0; i < 5000; i++ {
		fmt.Fprintf(&b, "1,%d,0.5\n", (i*7919)%5000)
	}
	var calls []Progress
	busy := false
	o := Options{Layout: Layout{Keys: []string{"run", "event"}}, Progress: func(p Progress) {
		if busy {
			t.Error("progress calls overlap")
		}
		busy = true
		calls = append(calls, p)
		busy = false
	}}
	if _, err := Sync(mustCSV(t, "a.csv", b.String()), mustCSV(t, "b.csv", b.String()), o); err != nil {
		t.Fatal(err)
	}
	if len(calls) < 5 {
		t.Fatalf("%d progress calls", len(calls))
	}
	last := calls[len(calls)-1]
	if !last.Unsorted || last.Parts != spillParts || last.PartsDone != spillParts || last.Rows[0]+last.Rows[1] < 9000 {
		t.Errorf("last progress %+v", last)
	}
}
