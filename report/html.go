package report

import (
	"html"
	"io"
	"strconv"
	"strings"
)

// maxTableRows is the most per-bin rows the HTML table shows; beyond it the
// bins with the largest |pull| are listed.
const maxTableRows = 500

const pageCSS = `
body{font-family:"DejaVu Sans",Verdana,sans-serif;font-size:16px;margin:1.2em auto;max-width:1400px;padding:0 1.5em;color:#1c2430;line-height:1.45}
p,li,.note{max-width:62em}
h1{font-size:1.7em;margin:.3em 0}
h2{font-size:1.35em;border-top:2px solid #ccd2dc;padding-top:.8em;margin-top:2.4em}
.subtitle{font-size:1.1em;color:#3b4454;margin:-.5em 0 .6em}
.pass{color:#1d6b35;font-weight:600}.fail{color:#8a1c12;font-weight:700}
.banner{font-size:1.35em;padding:.5em 1em;border-left:.4em solid;margin:.5em 0;max-width:none}
.banner.pass{border-color:#1d6b35;background:#eef6f0}
.banner.fail{border-color:#8a1c12;background:#fbeeec}
.banner.incomplete,.banner.pending,.banner.stale{border-color:#9a4a00;background:#fff1e0}
.incomplete,.pending,.stale{color:#9a4a00;font-weight:700}
.banner.state{font-size:1.1em;padding:.3em 1em}
.stamp{font-size:.9em;color:#4a5363;overflow-wrap:anywhere}
.banner.accepted{border-color:#b07d0e;background:#fdf5e2}
.banner b{font-weight:700}
table{border-collapse:collapse;margin:.6em 0;font-variant-numeric:tabular-nums}
td,th{padding:.2em .7em;border-bottom:1px solid #e1e4ea;text-align:right}
th{text-align:left;background:#f1f3f7}td:first-child{text-align:left}
figure{margin:1em 0;break-inside:avoid;page-break-inside:avoid}
svg{display:block;width:100%;height:auto;background:#fff}
.note{background:#f5f6f8;padding:.4em .8em;border-left:3px solid #858fa0;margin:.4em 0}
.warn{background:#fff5e0;border-left-color:#b07d0e}
.badge{display:inline-block;padding:0 .5em;border-radius:.3em;background:#e9ecf2;font-size:.9em}
.logtoggle:checked~svg.hist:not(.hist-log){display:none}
.logtoggle:not(:checked)~svg.hist-log{display:none}
label{font-size:.95em;margin-left:.3em}
details{margin:.6em 0}summary{cursor:pointer;font-weight:600}
@media print{
  body{max-width:none;margin:0;padding:0;font-size:11pt}
  h2{break-before:page;page-break-before:always;border-top:none}
  figure{break-inside:avoid;page-break-inside:avoid;width:100%}
  .logtoggle,.logtoggle+label{display:none}
  a{color:inherit;text-decoration:none}
}
`

// HTML writes one self-contained page (inline CSS and SVG, no script, no
// network), made to be projected in a meeting and printed or saved as PDF:
// the overall verdict on top with the missing comparisons, stale sign-offs
// and any accepted disagreement beside it, every warning, a table of the
// key numbers of each comparison (failing first, each linked to its
// section) before the notes, and for each
// comparison, over the full page width, the two chains' values (A as
// points with error bars and bin-width bars, B as a step with its error
// band), their ratio with the combined uncertainty band, the pulls per bin
// with the allowed band, the pull distribution against N(0, 1) with a
// linear or log count axis, the criteria in a fixed order and a collapsible
// per-bin table. Above 2000 bins the per-bin panels are decimated and the
// page says how.
func HTML(w io.Writer, s *Summary, st Style) error {
	size := 8192
	for _, e := range s.Entries {
		// a little more than the figures and the table of one comparison
		// take (measured: 34 kB for 20 bins); less would make the
		// destination grow twice over
		if e.Result != nil {
			gs, _ := groups(e.Bins)
			size += 18432 + 800*len(gs) + 200*min(e.Bins, maxTableRows)
		}
	}
	p := newPage(w, size)
	title := s.Title
	if title == "" {
		title = "tandem cross-check"
	}
	p.s("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>").e(title).
		s("</title>\n<style>" + pageCSS + "</style></head><body>\n")
	p.s("<h1>").e(title).s("</h1>\n")
	v, why := headline(s)
	p.s(`<p class="banner `).s(v).s(`">Verdict: <b class="`).s(v).s(`">`).s(v).s("</b>: ").e(why).s("</p>\n")
	for _, m := range s.Missing {
		p.s(`<p class="banner state `).s(m.Verdict).s(`"><b>`).s(m.Verdict).s("</b>: ").e(m.Observable).s(": ").e(m.Reason).s("</p>\n")
	}
	for _, x := range s.Stale {
		p.s(`<p class="banner state stale"><b>stale</b> sign-off: `).e(x).s("</p>\n")
	}
	for _, a := range s.Accepted {
		acceptedHTML(p, a)
	}
	for _, wn := range warnings(s) {
		p.s(`<p class="note warn"><b>warning</b>: `).e(wn).s("</p>\n")
	}
	keyNumbersHTML(p, s)
	for _, n := range s.Notes {
		p.s(`<p class="note">`).e(n).s("</p>\n")
	}
	teamsHTML(p, s)
	// the table of key numbers links each comparison: it is the contents
	for i, e := range ordered(s) {
		entryHTML(p, "c"+strconv.Itoa(i), e, s.Accepted)
		p.maybeFlush()
	}
	p.s("<p class=\"note\">Two chains agreeing is not proof that either is right; the collaboration's own review and publication rules govern.</p>\n")
	if l := stampLines(st.Stamp); len(l) > 0 {
		p.s(`<p class="stamp">`)
		for i, x := range l {
			if i > 0 {
				p.s("<br>")
			}
			p.e(x)
		}
		p.s("</p>\n")
	}
	p.s("</body></html>\n")
	return p.flush()
}

// keyNumbersHTML is the table of every comparison's key numbers, failing
// first, on the first screen of the page: verdict, χ²/ndf, p-value and the
// largest |pull|, each linked to its section.
func keyNumbersHTML(p *page, s *Summary) {
	if len(s.Entries) == 0 {
		return
	}
	p.s("<table class=\"keys\"><tr><th>comparison</th><th>verdict</th><th>χ²/ndf</th><th>p-value</th><th>max |pull|</th></tr>\n")
	for i, e := range ordered(s) {
		p.s(`<tr><td><a href="#c`).d(i).s(`">`).e(entryTitle(e)).s("</a></td><td>").s(verdictSpan(e.Pass)).s("</td><td>").s(chi2NDF(e)).
			s("</td><td>").s(pval(e.PValue)).s("</td><td>").s(num(e.MaxAbsPull)).s("</td></tr>\n")
	}
	p.s("</table>\n")
}

func esc(s string) string { return html.EscapeString(s) }

func verdictSpan(pass bool) string {
	if pass {
		return `<span class="pass">pass</span>`
	}
	return `<span class="fail">fail</span>`
}

func acceptedHTML(p *page, a Acceptance) {
	p.s(`<p class="banner accepted"><b>Disagreement accepted</b> by `).e(joinList(a.By)).s(": ").e(a.Reason).s("</p>\n")
}

func entryHTML(p *page, id string, e Entry, accepted []Acceptance) {
	p.s(`<h2 id="`).s(id).s(`">`).e(entryTitle(e)).s(": ").s(verdictSpan(e.Pass)).s("</h2>\n")
	if e.Title != "" {
		p.s(`<p class="subtitle">`).e(e.Title).s("</p>\n")
	}
	if !e.Pass {
		for _, a := range accepted {
			acceptedHTML(p, a)
		}
	}
	if e.Blinded {
		p.s(`<p><span class="badge">blinded values</span> the numbers shown are blinded; pulls and p-values equal the true ones. Blinding does not keep ratios, so no ratio panel is drawn</p>` + "\n")
	}
	if filesShown(e) {
		a, b := e.Sides()
		p.s("<p>").e(a).s(": <code>").e(e.Files[0]).s("</code>; ").e(b).s(": <code>").e(e.Files[1]).s("</code></p>\n")
	}
	limit := pullLimit(e)
	p.s(`<figure class="panels">` + "\n")
	if e.Cells() {
		cellFigures(p, id, e, limit) // 2-D: pull map and slices (map.go)
	} else {
		figure(p, id, e, limit)
	}
	p.s("</figure>\n")
	if _, k := groups(e.Bins); k > 1 {
		p.s(`<p class="note">`).d(e.Bins).s(" bins are drawn as ").d((e.Bins + k - 1) / k).s(" groups of ").d(k).
			s(" consecutive bins: in the values and ratio panels each group spans its lowest to its highest value, the pull panel shows each group's largest |pull|; the histogram, the statistics and the JSON report use every bin.</p>\n")
	}
	used := pullsUsed(e)
	checked := ""
	if len(used) >= 500 {
		checked = " checked"
	}
	p.s(`<figure class="histfig"><input type="checkbox" class="logtoggle" id="log-`).s(id).s(`"`).s(checked).s(`><label for="log-`).s(id).s(`">log scale for the counts</label>` + "\n")
	histSVG(p, id, e, used, false)
	histSVG(p, id+"-log", e, used, true)
	p.s("</figure>\n")
	p.s("<table><tr><th>criterion</th><th>value</th><th>adjusted p</th><th>limit</th><th>result</th></tr>\n")
	for _, c := range e.Criteria {
		name, v, adj, lim := critCells(c)
		p.s("<tr><td>").e(name).s("</td><td>").s(v).s("</td><td>").s(adj).s("</td><td>").e(lim).s("</td><td>").s(verdictSpan(c.Pass)).s("</td></tr>\n")
	}
	p.s("</table>\n")
	if e.Alpha > 0 {
		p.s("<p>The p-values are adjusted together (Holm) over ").d(e.Family).s(" p-values, so that agreeing chains fail with probability at most α = ").s(num(e.Alpha)).s(".</p>\n")
	}
	if l := sourcesLine(e); l != "" {
		p.s("<p>").et(capitalize(l), false).s("</p>\n")
	}
	for _, c := range e.Criteria {
		if !c.Pass && c.Detail != "" {
			p.s(`<p class="note">`).e(c.Name).s(": ").et(c.Detail, false).s("</p>\n")
		}
	}
	p.s("<p>").et(capitalize(shapeLine(e)), false).s("</p>\n")
	for _, wn := range e.Warnings {
		p.s(`<p class="note warn">`).et(wn, false).s("</p>\n")
	}
	binTableHTML(p, e)
	countsHTML(p, e)
}

// binTableHTML writes the per-bin values in a collapsed <details> block.
func binTableHTML(p *page, e Entry) {
	if e.Cells() {
		cellTableHTML(p, e) // 2-D (map.go)
		return
	}
	idx, cut := rows(e.Result, Style{MaxRows: maxTableRows})
	a, b := e.Sides()
	p.s("<details><summary>Per-bin values: ")
	if cut {
		p.s("the ").d(len(idx)).s(" bins with the largest |pull| of ").d(e.Bins).s(" (the JSON report has every bin)")
	} else {
		p.s("all ").d(e.Bins).s(" bins")
	}
	p.s("</summary>\n<table><tr><th>bin</th><th>lo</th><th>hi</th><th>").e(a).s("</th><th>±</th><th>").e(b).s("</th><th>±</th><th>a − b</th><th>σ<sub>d</sub></th><th>pull</th></tr>\n")
	for _, i := range idx {
		p.s("<tr>")
		binRow(p, e, i, "<td>", "</td>")
		p.s("</tr>\n")
	}
	p.s("</table></details>\n")
}

// joinList writes names as "a, b and c".
func joinList(names []string) string {
	switch len(names) {
	case 0:
		return ""
	case 1:
		return names[0]
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}
