package events

import (
	"path/filepath"
	"slices"
	"testing"

	"go-hep.org/x/hep/groot"
	"go-hep.org/x/hep/groot/riofs"
	"go-hep.org/x/hep/groot/rtree"
)

// writeRefTree writes the rows of events_a.csv into a TTree dir/events
// with go-hep's writer, in native types (int32 run, int64 event, float32
// hits, int32 trigger, bool quality and fiducial).
func writeRefTree(t *testing.T, path string) {
	t.Helper()
	csv, err := OpenCSV(filepath.Join(refDir, "events_a.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows := collect(t, csv, refLayout)
	f, err := groot.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	d, err := riofs.Dir(f).Mkdir("dir")
	if err != nil {
		t.Fatal(err)
	}
	var (
		run, trigger   int32
		event          int64
		energy, angle  float64
		hits           float32
		quality, fiduc bool
	)
	w, err := rtree.NewWriter(d, "events", []rtree.WriteVar{
		{Name: "run", Value: &run}, {Name: "event", Value: &event}, {Name: "energy", Value: &energy},
		{Name: "angle", Value: &angle}, {Name: "hits", Value: &hits}, {Name: "trigger", Value: &trigger},
		{Name: "quality", Value: &quality}, {Name: "fiducial", Value: &fiduc},
	}, rtree.WithBasketSize(4096))
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < rows.N; i++ {
		run, event = int32(rows.Keys[2*i]), rows.Keys[2*i+1]
		energy, angle, hits = rows.Vals[3*i], rows.Vals[3*i+1], float32(rows.Vals[3*i+2])
		c := rows.Cuts[i]
		trigger, quality, fiduc = int32(c&1), c&2 != 0, c&4 != 0
		if _, err := w.Write(); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// A TTree written by go-hep from events_a.csv reads back identically and
// gives the reference comparison.
func TestTreeWrittenByGoHEP(t *testing.T) {
	path := filepath.Join(t.TempDir(), "a.root")
	writeRefTree(t, path)
	spec := path + ":dir/events"
	tr, err := OpenSource(spec, TreeFuncs{})
	if err != nil {
		t.Fatal(err)
	}
	cols, _ := tr.Columns()
	want := []ColumnInfo{{"run", Int}, {"event", Int}, {"energy", Float}, {"angle", Float}, {"hits", Float},
		{"trigger", Int}, {"quality", Bool}, {"fiducial", Bool}}
	if !slices.Equal(cols, want) {
		t.Errorf("columns %v, want %v", cols, want)
	}
	csv, _ := OpenCSV(filepath.Join(refDir, "events_a.csv"))
	got, exp := collect(t, tr, refLayout), collect(t, csv, refLayout)
	if got.N != exp.N || !slices.Equal(got.Keys, exp.Keys) || !slices.Equal(got.Vals, exp.Vals) || !slices.Equal(got.Cuts, exp.Cuts) {
		t.Fatalf("tree rows differ from the CSV they were written from (%d vs %d rows)", got.N, exp.N)
	}
	ref := loadReference(t)
	b, _ := OpenCSV(filepath.Join(refDir, "events_b.csv"))
	s, err := Sync(tr, b, referenceOptions(ref))
	if err != nil {
		t.Fatal(err)
	}
	checkAgainstReference(t, ref, s)
}
