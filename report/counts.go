package report

import (
	"strconv"
)

// countRows is the table of a counts comparison's exact tests, one row per
// bin or cell: its edges, the test used (binomial given the total, or
// McNemar's on the discordant events), its exact two-sided p-value and,
// when common events were given, the discordant counts. nil when the
// comparison was not judged as counts.
func countRows(e Entry) [][]string {
	if e.Result == nil || e.Counts == nil {
		return nil
	}
	c := e.Counts
	head := append(binHeads(e), "test", "exact p")
	shared := len(c.OnlyA) == len(c.BinP) && len(c.OnlyB) == len(c.BinP) && len(c.OnlyA) > 0
	if shared {
		a, b := e.Sides()
		head = append(head, "only "+shorten(a, 16), "only "+shorten(b, 16))
	}
	rows := [][]string{head}
	for i := range c.BinP {
		r := []string{strconv.Itoa(i + 1)}
		if i < len(e.Lo) && i < len(e.Hi) {
			r = append(r, val(e.Lo[i]), val(e.Hi[i]))
		} else {
			r = append(r, "", "")
		}
		r = appendYEdges(r, e, i)
		test := ""
		if i < len(c.BinTests) {
			test = c.BinTests[i]
		}
		r = append(r, test, pval(c.BinP[i]))
		if shared {
			r = append(r, strconv.FormatInt(c.OnlyA[i], 10), strconv.FormatInt(c.OnlyB[i], 10))
		}
		rows = append(rows, r)
	}
	return rows
}

// countsCaption says where the exact tests' Monte Carlo came from, so the
// run can be repeated.
func countsCaption(e Entry) string {
	c := e.Counts
	s := "exact tests per bin (" + strconv.Itoa(c.Informative) + " informative"
	if c.Samples > 0 {
		s += "; Monte Carlo of G: " + strconv.Itoa(c.Samples) + " samples, seed " + strconv.FormatUint(c.Seed, 10) + ", error " + num(c.MCError)
	}
	return s + ")"
}

// countsText writes the exact-test table of a counts comparison.
func countsText(p *page, e Entry) {
	rows := countRows(e)
	if rows == nil {
		return
	}
	p.s("  ").s(countsCaption(e)).s(":\n")
	alignTable(p, "  ", capRows(rows), true)
}

// countsMarkdown writes the exact-test table as a Markdown table.
func countsMarkdown(p *page, e Entry) {
	rows := countRows(e)
	if rows == nil {
		return
	}
	p.s("\n").s(mdEscape(countsCaption(e))).s(":\n\n|")
	for _, h := range rows[0] {
		p.s(" ").s(mdEscape(h)).s(" |")
	}
	p.s("\n|")
	for range rows[0] {
		p.s(" ---: |")
	}
	p.s("\n")
	for _, r := range capRows(rows)[1:] {
		p.s("|")
		for _, c := range r {
			p.s(" ").s(mdEscape(c)).s(" |")
		}
		p.s("\n")
	}
}

// countsHTML writes the exact-test table in a closed details element.
func countsHTML(p *page, e Entry) {
	rows := countRows(e)
	if rows == nil {
		return
	}
	p.s("<details><summary>").e(countsCaption(e)).s("</summary>\n<table><tr>")
	for _, h := range rows[0] {
		p.s("<th>").e(h).s("</th>")
	}
	p.s("</tr>\n")
	for _, r := range capRows(rows)[1:] {
		p.s("<tr>")
		for _, c := range r {
			p.s("<td>").e(c).s("</td>")
		}
		p.s("</tr>\n")
	}
	p.s("</table></details>\n")
}

// capRows keeps the header and at most maxTableRows bins, as the per-bin
// tables do (the JSON report has every bin).
func capRows(rows [][]string) [][]string {
	if len(rows) > maxTableRows+1 {
		return rows[:maxTableRows+1]
	}
	return rows
}
