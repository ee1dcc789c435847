package compare

import (
	"fmt"

	"tandem/compare/table"
)

// Entry is the comparison of one column of one observable between two
// chains.
type Entry struct {
	// Observable names what was measured; in table mode it is set by the
	// caller (by default the file name of the first table).
	Observable string
	// Teams names the two chains compared, in the order A, B; empty in
	// table mode.
	Teams [2]string
	// Unit and Label describe the axis and value, when declared.
	XLabel, YLabel string
	// Blinded says whether the values are blinded.
	Blinded bool
	*Result
}

// Summary is a set of comparisons with one overall verdict.
type Summary struct {
	Entries []Entry
	// Title describes what was compared, for reports.
	Title string
	// Notes are free-text lines a report shows on top (campaign state,
	// accepted disagreements).
	Notes []string
}

// Pass reports whether every entry passes.
func (s *Summary) Pass() bool {
	for _, e := range s.Entries {
		if !e.Pass {
			return false
		}
	}
	return true
}

// Verdict is "pass" or "fail".
func (s *Summary) Verdict() string { return verdict(s.Pass()) }

func verdict(ok bool) string {
	if ok {
		return "pass"
	}
	return "fail"
}

// Verdict is "pass" or "fail" for one entry.
func (e *Entry) Verdict() string { return verdict(e.Pass) }

// Tables compares the selected columns of two tables, after checking that
// their bins agree within the relative edge tolerance edgeTol.
func Tables(a, b *table.Table, sels []Selection, edgeTol float64, opt Options) ([]*Result, error) {
	if err := table.SameEdges(a, b, edgeTol); err != nil {
		return nil, err
	}
	if len(sels) == 0 {
		return nil, fmt.Errorf("%s: no value columns to compare", a.Source)
	}
	out := make([]*Result, 0, len(sels))
	for _, sel := range sels {
		var sb *table.Series
		var errB error
		done := make(chan struct{})
		go func() {
			defer close(done)
			sb, errB = b.Series(sel)
		}()
		sa, err := a.Series(sel)
		<-done
		if err != nil {
			return nil, err
		}
		if errB != nil {
			return nil, errB
		}
		r, err := Series(sa, sb, opt)
		if err != nil {
			return nil, fmt.Errorf("column %q: %w", sel.Value, err)
		}
		out = append(out, r)
	}
	return out, nil
}

// Selection is re-exported so callers of Tables need not import table.
type Selection = table.Selection
