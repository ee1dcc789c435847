package report

import (
	"fmt"
	"io"
	"strings"

	"tandem/compare"
)

// Markdown writes the verdict, a criteria table and a per-bin table for
// each comparison, ready to paste into a meeting page or a merge request.
func Markdown(w io.Writer, s *Summary, st Style) error {
	ew := newPage(w, mdSize(s, st))
	title := s.Title
	if title == "" {
		title = "Cross-check"
	}
	v, why := headline(s)
	ew.s("## ").s(mdEscape(title)).s(": ").s(mdWord(v)).s("\n\n")
	ew.s("**Verdict: ").s(v).s("**: ").s(mdEscape(why)).s(".\n\n")
	for _, m := range s.Missing {
		ew.s("- **").s(m.Verdict).s("**: ").s(mdEscape(m.Observable)).s(": ").s(mdEscape(m.Reason)).s("\n")
	}
	for _, x := range s.Stale {
		ew.s("- **stale** sign-off: ").s(mdEscape(x)).s("\n")
	}
	if len(s.Missing)+len(s.Stale) > 0 {
		ew.s("\n")
	}
	for _, a := range s.Accepted {
		fmt.Fprintf(ew, "**Disagreement accepted** by %s: %s\n\n", mdEscape(joinList(a.By)), mdEscape(a.Reason))
	}
	for _, wn := range warnings(s) {
		ew.s("> **warning**: ").s(mdEscape(wn)).s("\n\n")
	}
	for _, n := range s.Notes {
		fmt.Fprintf(ew, "- %s\n", mdEscape(n))
	}
	if len(s.Notes) > 0 {
		fmt.Fprintln(ew)
	}
	teamsMarkdown(ew, s)
	fmt.Fprintln(ew, "| comparison | verdict | χ²/ndf | p-value | max \\|pull\\| |")
	fmt.Fprintln(ew, "| --- | --- | ---: | ---: | ---: |")
	entries := ordered(s)
	for _, e := range entries {
		ew.s("| ").s(mdEscape(entryTitle(e))).s(" | ").s(mdVerdict(e.Pass)).s(" | ").s(chi2NDF(e)).s(" | ").s(pval(e.PValue)).s(" | ").s(num(e.MaxAbsPull)).s(" |\n")
	}
	for _, e := range entries {
		ew.s("\n### ").s(mdEscape(entryTitle(e))).s(": ").s(mdVerdict(e.Pass)).s("\n\n")
		if e.Title != "" {
			ew.s(mdEscape(e.Title)).s("\n\n")
		}
		if e.Blinded {
			ew.s("Values are blinded.\n\n")
		}
		if !e.Pass {
			for _, a := range s.Accepted {
				fmt.Fprintf(ew, "**Disagreement accepted** by %s: %s\n\n", mdEscape(joinList(a.By)), mdEscape(a.Reason))
			}
		}
		ew.s("| criterion | value | adjusted | limit | result |\n| --- | ---: | ---: | ---: | --- |\n")
		for _, c := range e.Criteria {
			res := "pass"
			if !c.Pass {
				res = "**fail**: " + mdEscape(c.Detail)
			}
			name, v, adj, lim := critCells(c)
			ew.s("| ").s(mdEscape(name)).s(" | ").s(v).s(" | ").s(adj).s(" | ").s(mdEscape(lim)).s(" | ").s(res).s(" |\n")
		}
		if l := sourcesLine(e); l != "" {
			ew.s("\n").s(mdEscape(capitalize(l))).s("\n")
		}
		ew.s("\n").s(mdEscape(capitalize(shapeLine(e)))).s(".\n")
		for _, wn := range e.Warnings {
			fmt.Fprintf(ew, "\n> warning: %s\n", mdEscape(wn))
		}
		idx, cut := rows(e.Result, st)
		if cut {
			fmt.Fprintf(ew, "\nThe %d bins with the largest |pull| of %d:\n", len(idx), e.Bins)
		}
		a, b := e.Sides()
		ew.s("\n|")
		for _, h := range binHeads(e) {
			ew.s(" ").s(h).s(" |")
		}
		ew.s(" ").s(mdEscape(a)).s(" | ± | ").s(mdEscape(b)).s(" | ± | a − b | σ\\_d | pull |\n|")
		for range len(binHeads(e)) + 7 {
			ew.s(" ---: |")
		}
		ew.s("\n")
		for _, i := range idx {
			ew.s("|")
			binRow(ew, e, i, " ", " |")
			ew.s("\n")
		}
		countsMarkdown(ew, e)
		ew.maybeFlush()
	}
	if l := stampLines(st.Stamp); len(l) > 0 {
		ew.s("\n---\n\n")
		for _, x := range l {
			ew.s(mdEscape(x)).s("  \n")
		}
	}
	return ew.flush()
}

func capitalize(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

func mdVerdict(pass bool) string { return mdWord(verdictOf(pass)) }

// mdWord is a verdict of compare.Verdict* in Markdown: bold unless it is
// pass.
func mdWord(v string) string {
	if v == compare.VerdictPass {
		return v
	}
	return "**" + v + "**"
}

var mdReplacer = strings.NewReplacer("|", "\\|", "<", "&lt;", ">", "&gt;", "*", "\\*", "_", "\\_", "`", "\\`", "\n", " ")

func mdEscape(s string) string { return mdReplacer.Replace(s) }

// mdSize is about the size of the text or Markdown report of s.
func mdSize(s *Summary, st Style) int {
	limit := st.MaxRows
	if limit <= 0 {
		limit = 200
	}
	size := 4096
	for _, e := range s.Entries {
		if e.Result != nil {
			size += 768 + 80*min(e.Bins, limit)
		}
	}
	return size
}
