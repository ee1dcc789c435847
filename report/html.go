package report

import (
	"fmt"
	"html"
	"io"
	"strings"

	"tandem/compare"
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
.banner.agree{border-color:#1d6b35;background:#eef6f0}
.banner.disagree{border-color:#8a1c12;background:#fbeeec}
.banner.accepted{border-color:#b07d0e;background:#fdf5e2}
.banner b{font-weight:700}
table{border-collapse:collapse;margin:.6em 0;font-variant-numeric:tabular-nums}
td,th{padding:.2em .7em;border-bottom:1px solid #e1e4ea;text-align:right}
th{text-align:left;background:#f1f3f7}td:first-child{text-align:left}
.toc{columns:2;font-size:.95em}.toc li{break-inside:avoid}
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
  .toc{columns:1}h2{break-before:page;page-break-before:always;border-top:none}
  figure{break-inside:avoid;page-break-inside:avoid;width:100%}
  .logtoggle,.logtoggle+label{display:none}
  a{color:inherit;text-decoration:none}
}
`

// HTML writes one self-contained page (inline CSS and SVG, no script, no
// network), made to be projected in a meeting and printed or saved as PDF:
// the overall verdict on top with any accepted disagreement beside it, a
// table of contents with failing comparisons first, and for each
// comparison, over the full page width, the two chains' values (A as
// points with error bars and bin-width bars, B as a step with its error
// band), their ratio with the combined uncertainty band, the pulls per bin
// with the allowed band, the pull distribution against N(0, 1) with a
// linear or log count axis, the criteria in a fixed order and a collapsible
// per-bin table. Above 2000 bins the per-bin panels are decimated and the
// page says how.
func HTML(w io.Writer, s *compare.Summary) error {
	ew := &errWriter{w: w}
	title := s.Title
	if title == "" {
		title = "tandem cross-check"
	}
	fmt.Fprintf(ew, "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>%s</title>\n<style>%s</style></head><body>\n", esc(title), pageCSS)
	fmt.Fprintf(ew, "<h1>%s</h1>\n", esc(title))
	failed := failures(s)
	if failed == 0 {
		fmt.Fprintf(ew, "<p class=\"banner agree\">Verdict: <b class=\"pass\">agree</b>: all %d comparisons within tolerance</p>\n", len(s.Entries))
	} else {
		fmt.Fprintf(ew, "<p class=\"banner disagree\">Verdict: <b class=\"fail\">disagree</b>: %d of %d comparisons outside tolerance</p>\n", failed, len(s.Entries))
	}
	for _, a := range s.Accepted {
		fmt.Fprintf(ew, "<p class=\"banner accepted\"><b>Disagreement accepted</b> by %s: %s</p>\n", esc(joinList(a.By)), esc(a.Reason))
	}
	for _, n := range s.Notes {
		fmt.Fprintf(ew, "<p class=\"note\">%s</p>\n", esc(n))
	}
	fmt.Fprintln(ew, `<h3>Contents</h3><ol class="toc">`)
	for i, e := range ordered(s) {
		fmt.Fprintf(ew, `<li><a href="#c%d">%s</a> %s</li>`+"\n", i, esc(entryTitle(e)), verdictSpan(e.Pass))
	}
	fmt.Fprintln(ew, "</ol>")
	for i, e := range ordered(s) {
		entryHTML(ew, fmt.Sprintf("c%d", i), e, s.Accepted)
	}
	fmt.Fprintln(ew, "<p class=\"note\">Two chains agreeing is not proof that either is right; the collaboration's own review and publication rules govern.</p>\n</body></html>")
	return ew.err
}

func failures(s *compare.Summary) int {
	n := 0
	for _, e := range s.Entries {
		if !e.Pass {
			n++
		}
	}
	return n
}

func esc(s string) string { return html.EscapeString(s) }

func verdictSpan(pass bool) string {
	if pass {
		return `<span class="pass">pass</span>`
	}
	return `<span class="fail">fail</span>`
}

func entryHTML(w io.Writer, id string, e compare.Entry, accepted []compare.Acceptance) {
	fmt.Fprintf(w, `<h2 id="%s">%s: %s</h2>`+"\n", id, esc(entryTitle(e)), verdictSpan(e.Pass))
	if e.Title != "" {
		fmt.Fprintf(w, "<p class=\"subtitle\">%s</p>\n", esc(e.Title))
	}
	if !e.Pass {
		for _, a := range accepted {
			fmt.Fprintf(w, "<p class=\"banner accepted\"><b>Disagreement accepted</b> by %s: %s</p>\n", esc(joinList(a.By)), esc(a.Reason))
		}
	}
	if e.Blinded {
		fmt.Fprintln(w, `<p><span class="badge">blinded values</span> the numbers shown are blinded; pulls and p-values equal the true ones</p>`)
	}
	if filesShown(e) {
		a, b := e.Sides()
		fmt.Fprintf(w, "<p>%s: <code>%s</code>; %s: <code>%s</code></p>\n", esc(a), esc(e.Files[0]), esc(b), esc(e.Files[1]))
	}
	limit := pullLimit(e)
	fmt.Fprintln(w, `<figure class="panels">`)
	figure(w, id, e, limit)
	fmt.Fprintln(w, `</figure>`)
	if _, k := groups(e.Bins); k > 1 {
		fmt.Fprintf(w, "<p class=\"note\">%d bins are drawn as %d groups of %d consecutive bins: in the values and ratio panels each group spans its lowest to its highest value, the pull panel shows each group's largest |pull|; the histogram, the statistics and the JSON report use every bin.</p>\n",
			e.Bins, (e.Bins+k-1)/k, k)
	}
	used := len(pullsUsed(e))
	checked := ""
	if used >= 500 {
		checked = " checked"
	}
	fmt.Fprintf(w, "<figure class=\"histfig\"><input type=\"checkbox\" class=\"logtoggle\" id=\"log-%s\"%s><label for=\"log-%s\">log scale for the counts</label>\n", id, checked, id)
	histSVG(w, id, e, false)
	histSVG(w, id+"-log", e, true)
	fmt.Fprintln(w, "</figure>")
	fmt.Fprintln(w, "<table><tr><th>criterion</th><th>value</th><th>adjusted p</th><th>limit</th><th>result</th></tr>")
	for _, c := range e.Criteria {
		name, v, adj, lim := critCells(c)
		fmt.Fprintf(w, "<tr><td>%s</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td></tr>\n", esc(name), v, adj, esc(lim), verdictSpan(c.Pass))
	}
	fmt.Fprintln(w, "</table>")
	if e.Alpha > 0 {
		fmt.Fprintf(w, "<p>The p-values are adjusted together (Holm) over %d p-values, so that agreeing chains fail with probability at most α = %s.</p>\n", e.Family, num(e.Alpha))
	}
	if l := sourcesLine(e); l != "" {
		fmt.Fprintf(w, "<p>%s</p>\n", esc(capitalize(l)))
	}
	for _, c := range e.Criteria {
		if !c.Pass && c.Detail != "" {
			fmt.Fprintf(w, "<p class=\"note\">%s: %s</p>\n", esc(c.Name), esc(c.Detail))
		}
	}
	fmt.Fprintf(w, "<p>%s</p>\n", esc(capitalize(shapeLine(e))))
	for _, wn := range e.Warnings {
		fmt.Fprintf(w, "<p class=\"note warn\">%s</p>\n", esc(wn))
	}
	binTableHTML(w, e)
}

// binTableHTML writes the per-bin values in a collapsed <details> block.
func binTableHTML(w io.Writer, e compare.Entry) {
	idx, cut := rows(e.Result, Style{MaxRows: maxTableRows})
	what := fmt.Sprintf("all %d bins", e.Bins)
	if cut {
		what = fmt.Sprintf("the %d bins with the largest |pull| of %d (the JSON report has every bin)", len(idx), e.Bins)
	}
	a, b := e.Sides()
	fmt.Fprintf(w, "<details><summary>Per-bin values: %s</summary>\n<table><tr><th>bin</th><th>lo</th><th>hi</th><th>%s</th><th>±</th><th>%s</th><th>±</th><th>a − b</th><th>σ_d</th><th>pull</th></tr>\n", what, esc(a), esc(b))
	for _, i := range idx {
		c := binCells(e, i)
		fmt.Fprint(w, "<tr>")
		for _, x := range c {
			fmt.Fprintf(w, "<td>%s</td>", esc(x))
		}
		fmt.Fprintln(w, "</tr>")
	}
	fmt.Fprintln(w, "</table></details>")
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
