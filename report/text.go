package report

import (
	"fmt"
	"io"
	"math"
	"text/tabwriter"

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

func verdictWord(st Style, pass bool) string {
	if pass {
		return paint(st, ansiGreen, "AGREE")
	}
	return paint(st, ansiRed+ansiBold, "DISAGREE")
}

// Text writes a terminal report: the overall verdict first, one line per
// comparison, then for each comparison its criteria (failures first),
// warnings and a per-bin table.
func Text(w io.Writer, s *compare.Summary, st Style) error {
	ew := &errWriter{w: w}
	pass := s.Pass()
	failed := 0
	for _, e := range s.Entries {
		if !e.Pass {
			failed++
		}
	}
	fmt.Fprintf(ew, "verdict: %s", verdictWord(st, pass))
	if !pass {
		fmt.Fprintf(ew, " (%d of %d comparisons outside tolerance)", failed, len(s.Entries))
	}
	fmt.Fprintln(ew)
	if s.Title != "" {
		fmt.Fprintf(ew, "%s\n", s.Title)
	}
	for _, n := range s.Notes {
		fmt.Fprintf(ew, "note: %s\n", n)
	}
	for _, e := range ordered(s) {
		mark := "ok  "
		if !e.Pass {
			mark = paint(st, ansiRed, "FAIL")
		}
		fmt.Fprintf(ew, "  %s %s: χ²/ndf = %s/%d, p = %s, max |pull| = %s\n",
			mark, entryTitle(e), num(e.Chi2), e.NDF, pval(e.PValue), num(e.MaxAbsPull))
	}
	for _, e := range ordered(s) {
		fmt.Fprintf(ew, "\n== %s", entryTitle(e))
		if e.Blinded {
			fmt.Fprint(ew, " [blinded values]")
		}
		fmt.Fprintf(ew, ": %s\n", verdictWord(st, e.Pass))
		tw := tabwriter.NewWriter(ew, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "  criterion\tvalue\tlimit\tresult\t")
		for _, c := range e.Criteria {
			res := "pass"
			if !c.Pass {
				res = paint(st, ansiRed, "FAIL")
			}
			fmt.Fprintf(tw, "  %s\t%s\t%s %s\t%s\t\n", c.Name, num(c.Value), c.Op, num(c.Limit), res)
		}
		tw.Flush()
		for _, c := range e.Criteria {
			if !c.Pass && c.Detail != "" {
				fmt.Fprintf(ew, "  why: %s: %s\n", c.Name, c.Detail)
			}
		}
		fmt.Fprintf(ew, "  pulls: mean %s ± %s, width %s ± %s, KS D = %s (p = %s), %d runs (p = %s)\n",
			num(e.PullMean), num(e.PullMeanErr), num(e.PullWidth), num(e.PullWidthEr),
			num(e.KSStat), pval(e.KSP), e.Runs, pval(e.RunsP))
		for _, wn := range e.Warnings {
			fmt.Fprintf(ew, "  warning: %s\n", wn)
		}
		idx, cut := rows(e.Result, st)
		if cut {
			fmt.Fprintf(ew, "  showing the %d bins with the largest |pull| of %d\n", len(idx), e.Bins)
		}
		a, b := "a", "b"
		if e.Teams[0] != "" {
			a, b = e.Teams[0], e.Teams[1]
		}
		tw = tabwriter.NewWriter(ew, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "bin\tlo\thi\t%s\t±\t%s\t±\tdiff\tσ_diff\tpull\t\n", a, b)
		for _, i := range idx {
			p := num(e.Pulls[i])
			if e.MaxPullBin == i || (st.Color && !passPull(e, i)) {
				p = paint(st, ansiBold, p)
			}
			fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", i+1,
				val(e.Lo[i]), val(e.Hi[i]), val(e.A[i]), val(e.ErrA[i]), val(e.B[i]), val(e.ErrB[i]),
				val(e.Diff[i]), val(e.SigmaDiff[i]), p)
		}
		tw.Flush()
	}
	return ew.err
}

func passPull(e compare.Entry, i int) bool {
	for _, c := range e.Criteria {
		if c.Name == "max |pull|" {
			return math.Abs(e.Pulls[i]) <= c.Limit
		}
	}
	return true
}

// ordered returns the entries with failing ones first, otherwise in order.
func ordered(s *compare.Summary) []compare.Entry {
	out := make([]compare.Entry, 0, len(s.Entries))
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
