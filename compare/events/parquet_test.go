package events

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"testing"

	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/file"
)

const refDir = "../../testdata/reference"

// needTool skips a test whose outside tool is missing, or fails it when
// TANDEM_REQUIRE_TOOLS is set (as .ci/run does).
func needTool(t *testing.T, msg string) {
	t.Helper()
	if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
		t.Fatalf("%s (TANDEM_REQUIRE_TOOLS is set)", msg)
	}
	t.Skip(msg)
}

// collect reads every row of a table into one batch.
func collect(t *testing.T, tb Source, l Layout) *Batch {
	t.Helper()
	all := &Batch{}
	err := tb.Scan(l, func(b *Batch) error {
		all.N += b.N
		all.Keys = append(all.Keys, b.Keys...)
		all.Vals = append(all.Vals, b.Vals...)
		all.Cuts = append(all.Cuts, b.Cuts...)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return all
}

var refLayout = Layout{Keys: []string{"run", "event"}, Vars: []string{"energy", "angle", "hits"},
	Cuts: []string{"trigger", "quality", "fiducial"}}

// checkSameAsCSV reads a Parquet file written by hyparquet-writer from
// events_a.csv and requires every key, value and cut bit to be identical.
func checkSameAsCSV(t *testing.T, path string) {
	t.Helper()
	pq, err := OpenParquet(path)
	if err != nil {
		t.Fatal(err)
	}
	cols, _ := pq.Columns()
	want := []ColumnInfo{{"run", Int}, {"event", Int}, {"energy", Float}, {"angle", Float}, {"hits", Float},
		{"trigger", Int}, {"quality", Bool}, {"fiducial", Bool}, {"note", Other}}
	if !slices.Equal(cols, want) {
		t.Errorf("columns %v, want %v", cols, want)
	}
	csv, err := OpenCSV(filepath.Join(refDir, "events_a.csv"))
	if err != nil {
		t.Fatal(err)
	}
	got, exp := collect(t, pq, refLayout), collect(t, csv, refLayout)
	if got.N != exp.N || !slices.Equal(got.Keys, exp.Keys) || !slices.Equal(got.Vals, exp.Vals) || !slices.Equal(got.Cuts, exp.Cuts) {
		t.Fatalf("Parquet rows differ from the CSV they were written from (%d vs %d rows)", got.N, exp.N)
	}
	var passQ int
	for _, c := range got.Cuts {
		passQ += int(c >> 1 & 1)
	}
	if passQ == 0 || passQ == got.N {
		t.Fatalf("quality cut is constant (%d of %d): booleans were not really checked", passQ, got.N)
	}
	// The quality column must really be RLE-encoded booleans, the case
	// another Go Parquet library misread.
	r, err := file.OpenParquetFile(path, false)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if r.NumRowGroups() < 2 {
		t.Errorf("%d row groups, want several", r.NumRowGroups())
	}
	q := r.MetaData().Schema.ColumnIndexByName("quality")
	cc, err := r.MetaData().RowGroup(0).ColumnChunk(q)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Contains(cc.Encodings(), parquet.Encodings.RLE) {
		t.Errorf("quality column encodings %v, want RLE", cc.Encodings())
	}
}

// events_a.parquet was written by hyparquet-writer 0.17.0 (npm) with
// testdata/reference/events_write_parquet.mjs.
func TestParquetFromHyparquetWriter(t *testing.T) {
	checkSameAsCSV(t, filepath.Join(refDir, "events_a.parquet"))
}

// TestParquetRegenerated writes the file again with node and the writer
// package, when they are here: TANDEM_HYPARQUET_WRITER names the
// node_modules folder (npm install --prefix DIR hyparquet-writer@0.17.0).
func TestParquetRegenerated(t *testing.T) {
	modules := os.Getenv("TANDEM_HYPARQUET_WRITER")
	node, err := exec.LookPath("node")
	if err != nil {
		needTool(t, "node is not installed")
	}
	if modules == "" {
		needTool(t, "TANDEM_HYPARQUET_WRITER (a node_modules folder with hyparquet-writer) is not set")
	}
	out := filepath.Join(t.TempDir(), "a.parquet")
	cmd := exec.Command(node, filepath.Join(refDir, "events_write_parquet.mjs"), modules, filepath.Join(refDir, "events_a.csv"), out)
	if msg, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("node: %v\n%s", err, msg)
	} else {
		t.Logf("%s", bytes.TrimSpace(msg))
	}
	checkSameAsCSV(t, out)
}

// TestParquetSyncAgainstReference runs the reference comparison with A
// read from Parquet.
func TestParquetSyncAgainstReference(t *testing.T) {
	ref := loadReference(t)
	a, err := OpenParquet(filepath.Join(refDir, "events_a.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	b, err := OpenCSV(filepath.Join(refDir, "events_b.csv"))
	if err != nil {
		t.Fatal(err)
	}
	s, err := Sync(a, b, referenceOptions(ref))
	if err != nil {
		t.Fatal(err)
	}
	checkAgainstReference(t, ref, s)
}

// The small fuzz seed (events_write_parquet_seed.mjs) has nulls in x,
// which read as NaN, and RLE booleans in three row groups.
func TestParquetSeedNulls(t *testing.T) {
	tb, err := OpenParquet("testdata/parquet/small.parquet")
	if err != nil {
		t.Fatal(err)
	}
	got := collect(t, tb, Layout{Keys: []string{"run", "event"}, Vars: []string{"x", "y"}, Cuts: []string{"pass"}})
	if got.N != 24 {
		t.Fatalf("%d rows", got.N)
	}
	for i := 0; i < got.N; i++ {
		x, y, pass := got.Vals[2*i], got.Vals[2*i+1], got.Cuts[i] == 1
		wantX := float64(i) / 3
		if (i%5 == 0) != (x != x) || (i%5 != 0 && x != wantX) || y != float64(i)*0.25 || pass != (i%3 != 0) ||
			got.Keys[2*i] != int64(1+i>>3) || got.Keys[2*i+1] != int64(7*i) {
			t.Errorf("row %d: keys %v x %v y %v pass %v", i, got.Keys[2*i:2*i+2], x, y, pass)
		}
	}
}
