package campaign_test

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"tandem/blind/campaign"
	"tandem/blind/internal/format"
	"tandem/compare/fuzzseed"
)

// TestParseLedgerHalves: parsing a ledger in two halves at once gives
// exactly what the linear format.ParseLedger gives (the reference), for
// the demo's ledger and for every line of it changed, removed, doubled or
// swapped with the next.
func TestParseLedgerHalves(t *testing.T) {
	dir := buildDemo(t, "")
	data, err := os.ReadFile(filepath.Join(dir, campaign.LedgerFile))
	if err != nil {
		t.Fatal(err)
	}
	same := func(name string, data []byte) {
		t.Helper()
		want, werr := format.ParseLedger("ledger", data)
		got, gerr := campaign.ParseLedgerHalves("ledger", data)
		if fmt.Sprint(werr) != fmt.Sprint(gerr) || !reflect.DeepEqual(want, got) {
			t.Errorf("%s: halves give %d entries, %v; linear %d entries, %v", name, len(got), gerr, len(want), werr)
		}
	}
	same("intact", data)
	lines := bytes.SplitAfter(data, []byte("\n"))
	lines = lines[:len(lines)-1] // after the last LF
	if len(lines) < 8 {
		t.Fatalf("the demo ledger has only %d lines", len(lines))
	}
	join := func(ls ...[]byte) []byte { return bytes.Join(ls, nil) }
	for i := range lines {
		before, after := join(lines[:i]...), join(lines[i+1:]...)
		bad := bytes.Clone(lines[i])
		bad[len(bad)/2] ^= 1
		same(fmt.Sprint("line ", i+1, " changed"), join(before, bad, after))
		same(fmt.Sprint("line ", i+1, " removed"), join(before, after))
		same(fmt.Sprint("line ", i+1, " doubled"), join(before, lines[i], lines[i], after))
		if i+1 < len(lines) {
			same(fmt.Sprint("lines ", i+1, " and ", i+2, " swapped"), join(before, lines[i+1], lines[i], join(lines[i+2:]...)))
		}
	}
	same("torn", data[:len(data)-5])
	same("empty", nil)
	same("header only", lines[0])
}

// FuzzParseLedgerHalves holds the two-halves parse to format.ParseLedger
// on any input.
func FuzzParseLedgerHalves(f *testing.F) {
	for _, b := range fuzzseed.Load(f, "ledger*") {
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		want, werr := format.ParseLedger("ledger", data)
		got, gerr := campaign.ParseLedgerHalves("ledger", data)
		if fmt.Sprint(werr) != fmt.Sprint(gerr) || !reflect.DeepEqual(want, got) {
			t.Fatalf("halves give %d entries, %v; linear %d entries, %v", len(got), gerr, len(want), werr)
		}
	})
}
