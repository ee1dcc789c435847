package main

import (
	"bytes"
	"strings"
	"testing"
	"time"

	"tandem/compare/events"
)

// The progress line stays quiet for the first two seconds, then rewrites
// one line in place at most twice a second, and is erased at the end.
func TestProgressLine(t *testing.T) {
	var buf bytes.Buffer
	p := &progressLine{w: &buf, start: time.Now()}
	p.show(events.Progress{Rows: [2]int64{1 << 20, 0}})
	if buf.Len() != 0 {
		t.Fatalf("progress shown at once: %q", buf.String())
	}
	p.start = time.Now().Add(-3 * time.Second)
	p.show(events.Progress{Rows: [2]int64{3e6, 2e6}, Unsorted: true})
	p.show(events.Progress{Rows: [2]int64{4e6, 2e6}, Unsorted: true}) // too soon: not shown
	if got := buf.String(); !strings.HasPrefix(got, "\r\x1b[Ktandem: sync: 5.0 M rows read (tables not sorted by key: partitioning), 3 s") || strings.Count(got, "\r") != 1 {
		t.Errorf("progress line %q", got)
	}
	p.last = time.Time{}
	p.show(events.Progress{Rows: [2]int64{6e6, 6e6}, Unsorted: true, PartsDone: 64, Parts: 256})
	if !strings.Contains(buf.String(), "64 of 256 partitions merged") {
		t.Errorf("progress line %q", buf.String())
	}
	buf.Reset()
	p.end()
	if buf.String() != "\r\x1b[K" {
		t.Errorf("end wrote %q", buf.String())
	}
	var none *progressLine
	none.end() // no terminal: nothing to erase
}
