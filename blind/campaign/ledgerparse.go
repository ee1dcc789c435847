package campaign

import (
	"bytes"
	"runtime"

	"tandem/blind/internal/format"
)

// parallelLedger is the size from which a whole ledger is parsed in two
// halves at once (a variable so the tests can lower it).
var parallelLedger = 256 << 10

// parseLedger is [format.ParseLedger], with the two halves of a large
// ledger decoded at the same time when there is more than one CPU: every
// command parses the whole ledger, and at a thousand entries that is most
// of what a seal costs. The result, and the first error, are those of
// format.ParseLedger: the first half is parsed by it as a ledger of its
// own, and the second by [format.ParseMore] after a stand-in for the
// first half whose last entry carries the hash of the first half's last
// line, so the chain is checked across the cut as everywhere else and the
// line numbers and sequence numbers count on from the first half. An
// error in the first half is reported before one in the second, as the
// linear parse would.
func parseLedger(path string, data []byte) ([]format.Entry, error) {
	if len(data) == 0 || len(data) < parallelLedger || runtime.GOMAXPROCS(0) < 2 || data[len(data)-1] != '\n' {
		return format.ParseLedger(path, data)
	}
	header := bytes.IndexByte(data, '\n') + 1
	mid := header + (len(data)-header)/2
	nl := bytes.IndexByte(data[mid:], '\n')
	cut := mid + nl + 1 // just after a line, inside the body
	if nl < 0 || cut >= len(data) {
		return format.ParseLedger(path, data)
	}
	first, second := data[:cut], data[cut:]
	k := bytes.Count(first[header:], []byte("\n"))
	if k == 0 {
		return format.ParseLedger(path, data)
	}
	last := first[bytes.LastIndexByte(first[:len(first)-1], '\n')+1 : len(first)-1]

	type half struct {
		entries []format.Entry
		err     error
	}
	done := make(chan half, 1)
	go func() {
		stand := make([]format.Entry, k, k+bytes.Count(second, []byte("\n")))
		stand[k-1].SetHash(format.HashLine(last))
		es, err := format.ParseMore(path, stand, second)
		if err == nil {
			es = es[k:]
		}
		done <- half{es, err}
	}()
	a, errA := format.ParseLedger(path, first)
	b := <-done
	if errA != nil {
		return nil, errA
	}
	if b.err != nil {
		return nil, b.err
	}
	return append(a, b.entries...), nil
}
