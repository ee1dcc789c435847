package report

import (
	"fmt"
	"io"
	"math"
	"strings"
	"unicode/utf8"

	"tandem/compare"
)

const (
	ansiRed   = "\x1b[31m"
	ansiGreen = "\x1b[32m"
	ansiBold  = "\x1b[1m"
	ansiReset = "\x1b[0m"
)

func paint(st Style, code, s string) string {
	if !st.Color {
		return s
	}
	return code + s + ansiReset
}

// verdictWord is a pass or fail in the text report (the event-level
// sync report uses it too).
func verdictWord(st Style, pass bool) string {
	if pass {
		return paint(st, ansiGreen, "PASS")
	}
	return paint(st, ansiRed+ansiBold, "FAIL")
}

// textVerdict writes a verdict of compare.Verdict* for the terminal: in
// capitals on the verdict line (big), in small letters per comparison,
// green for pass and red for the others.
func textVerdict(st Style, v string, big bool) string {
	w := v
	if big {
		w = strings.ToUpper(v)
	}
	switch v {
	case compare.VerdictPass:
		return paint(st, ansiGreen, w)
	case compare.VerdictFail:
		return paint(st, ansiRed+ansiBold, w)
	}
	return paint(st, ansiRed, w)
}

// Text writes a terminal report: the overall verdict first with what it
// rests on, the missing comparisons and stale sign-offs, any accepted
// disagreement, the warnings, one line per comparison, then for each
// comparison its criteria (in a fixed order), warnings and a per-bin
// table, and the stamp last.
func Text(w io.Writer, s *Summary, st Style) error {
	ew := newPage(w, mdSize(s, st))
	v, why := headline(s)
	ew.s("verdict: ").s(textVerdict(st, v, true)).s(" (").s(why).s(")\n")
	for _, m := range s.Missing {
		ew.s("missing: ").s(missingLine(m)).s("\n")
	}
	for _, x := range s.Stale {
		ew.s("stale sign-off: ").s(x).s("\n")
	}
	for _, a := range s.Accepted {
		fmt.Fprintf(ew, "%s by %s: %s\n", paint(st, ansiBold, "DISAGREEMENT ACCEPTED"), joinList(a.By), a.Reason)
	}
	if s.Title != "" {
		fmt.Fprintf(ew, "%s\n", s.Title)
	}
	for _, wn := range warnings(s) {
		ew.s("warning: ").s(wn).s("\n")
	}
	for _, n := range s.Notes {
		fmt.Fprintf(ew, "note: %s\n", n)
	}
	teamsText(ew, s, st)
	entries := ordered(s)
	for _, e := range entries {
		mark := textVerdict(st, e.Verdict(), false)
		ew.s("  ").s(mark).s(" ").s(entryTitle(e)).s(": χ²/ndf = ").s(chi2NDF(e)).s(", p = ").s(pval(e.PValue)).s(", max |pull| = ").s(num(e.MaxAbsPull)).s("\n")
	}
	var crit [][]string
	for _, e := range entries {
		ew.s("\n== ").s(entryTitle(e))
		if e.Blinded {
			ew.s(" [blinded values]")
		}
		ew.s(": ").s(textVerdict(st, e.Verdict(), false)).s("\n")
		if e.Title != "" {
			ew.s("  ").s(e.Title).s("\n")
		}
		if filesShown(e) {
			a, b := e.Sides()
			fmt.Fprintf(ew, "  %s: %s; %s: %s\n", a, e.Files[0], b, e.Files[1])
		}
		crit = append(crit[:0], []string{"criterion", "value", "adjusted", "limit", "result"})
		for _, c := range e.Criteria {
			res := textVerdict(st, verdictOf(c.Pass), false)
			name, v, adj, lim := critCells(c)
			crit = append(crit, []string{name, v, adj, lim, res})
		}
		alignTable(ew, "  ", crit, false)
		if l := sourcesLine(e); l != "" {
			ew.s("  ").s(l).s("\n")
		}
		for _, c := range e.Criteria {
			if !c.Pass && c.Detail != "" {
				fmt.Fprintf(ew, "  why: %s: %s\n", c.Name, c.Detail)
			}
		}
		ew.s("  ").s(shapeLine(e)).s("\n")
		for _, wn := range e.Warnings {
			ew.s("  warning: ").s(wn).s("\n")
		}
		idx, cut := rows(e.Result, st)
		if cut {
			fmt.Fprintf(ew, "  showing the %d bins with the largest |pull| of %d\n", len(idx), e.Bins)
		}
		a, b := e.Sides()
		cells := make([]string, 0, 10*(len(idx)+1))
		cells = append(append(cells, binHeads(e)...), shorten(a, 16), "±", shorten(b, 16), "±", "a − b", "σ_d", "pull")
		bins := make([][]string, 1, len(idx)+1)
		bins[0] = cells
		for _, i := range idx {
			k := len(cells)
			cells = binCells(cells, e, i)
			c := cells[k:len(cells):len(cells)]
			if e.MaxPullBin == i || (st.Color && !passPull(e, i)) {
				c[len(c)-1] = paint(st, ansiBold, c[len(c)-1])
			}
			bins = append(bins, c)
		}
		alignTable(ew, "  ", bins, true)
		countsText(ew, e)
		ew.maybeFlush()
	}
	if l := stampLines(st.Stamp); len(l) > 0 {
		ew.s("\n")
		for _, x := range l {
			ew.s(x).s("\n")
		}
	}
	return ew.flush()
}

// alignTable writes rows as columns two spaces apart, right-aligned (or
// left-aligned), measuring each cell by what a terminal shows: characters,
// not bytes, and no ANSI escape sequences.
func alignTable(p *page, indent string, rows [][]string, right bool) {
	var width []int
	for _, r := range rows {
		for j, c := range r {
			if j >= len(width) {
				width = append(width, 0)
			}
			width[j] = max(width[j], visibleWidth(c))
		}
	}
	for _, r := range rows {
		p.s(indent)
		for j, c := range r {
			pad := width[j] - visibleWidth(c)
			if j > 0 {
				p.s("  ")
			}
			if right {
				p.spaces(pad).s(c)
			} else if j < len(r)-1 {
				p.s(c).spaces(pad)
			} else {
				p.s(c)
			}
		}
		p.s("\n")
	}
}

// visibleWidth counts the runes of s outside ANSI escape sequences
// (ESC [ … final byte).
func visibleWidth(s string) int {
	ascii := true
	for i := 0; i < len(s); i++ {
		if c := s[i]; c >= utf8.RuneSelf || c == 0x1b {
			ascii = false
			break
		}
	}
	if ascii {
		return len(s)
	}
	n, esc := 0, false
	for _, r := range s {
		switch {
		case esc:
			if r >= 0x40 && r <= 0x7e && r != '[' {
				esc = false
			}
		case r == 0x1b:
			esc = true
		default:
			n++
		}
	}
	return n
}

func passPull(e Entry, i int) bool {
	for _, c := range e.Criteria {
		if c.Name == compare.CritMaxPull {
			return math.Abs(e.Pulls[i]) <= c.Limit
		}
	}
	return true
}

// ordered returns the entries with failing ones first, otherwise in order.
func ordered(s *Summary) []Entry {
	out := make([]Entry, 0, len(s.Entries))
	for _, e := range s.Entries {
		if !e.Pass {
			out = append(out, e)
		}
	}
	for _, e := range s.Entries {
		if e.Pass {
			out = append(out, e)
		}
	}
	return out
}

// errWriter remembers the first write error so renderers can write freely.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return len(p), nil
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, nil
}
