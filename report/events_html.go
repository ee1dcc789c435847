package report

import (
	"fmt"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"

	"tandem/compare/events"
)

// The sync page is made for a meeting room: a verdict banner first, then
// the matching, one figure per variable (the histogram of relative
// differences with both axes numbered and titled and the tolerance
// marked), the cut flow as a figure of both chains' step efficiencies with
// their Clopper–Pearson intervals above its table, the failing events and
// the per-bin overlap. Numbers never break across lines: table cells do
// not wrap (wide tables scroll), and in running text every number is kept
// whole. Every text in a figure is at least 12 px at its natural size.

const syncCSS = `body{font-family:system-ui,sans-serif;margin:1.2em auto;max-width:74em;padding:0 1em;color:#1c2430;line-height:1.45;font-size:16px}
h1{font-size:1.45em;margin:.2em 0 .6em}h2{font-size:1.15em;border-top:1px solid #ccd;padding-top:.7em;margin-top:1.6em}
.banner{border-radius:8px;padding:.7em 1em;margin:.4em 0 1em;border:2px solid}
.banner b{font-size:1.6em;letter-spacing:.04em;margin-right:.6em}
.banner.pass{background:#e7f4ea;border-color:#1d6b35;color:#124a24}.banner.fail{background:#fbe9e9;border-color:#a4161a;color:#7a1012}
.banner ul{margin:.4em 0 0;padding-left:1.2em;font-weight:400}
.pass{color:#1d6b35}.fail{color:#a4161a;font-weight:600}
table{border-collapse:collapse;margin:.5em 0}td,th{padding:.2em .55em;border-bottom:1px solid #e3e6ea;text-align:right;white-space:nowrap}
th{text-align:left;background:#f3f5f8;white-space:normal;vertical-align:bottom}td:first-child{text-align:left}
tr.split td{background:#fde8e8;font-weight:600}tr.first td{background:#fff6e5}
.n{white-space:nowrap}.k{color:#4a5263;font-size:.9em}
svg{background:#fff;border:1px solid #e3e6ea;max-width:100%;height:auto}.figs{display:flex;flex-wrap:wrap;gap:.8em}
.note{background:#f6f7f9;padding:.4em .8em;border-left:3px solid #8893a4}
.wide{overflow-x:auto}
`

// numberRE finds the numbers of running text, exponents included.
var numberRE = regexp.MustCompile(`[-+−]?[0-9][0-9.,]*(?:[eE][-+−]?[0-9]+)?%?`)

// escLabel escapes a chain label or a file name for running text and keeps
// it on one line (a path would otherwise break at a hyphen, "2026-⏎11").
func escLabel(s string) string { return `<span class="n">` + esc(s) + `</span>` }

// thLabel is a chain label in a table header: its last 24 characters, kept
// on one line, the whole label in a tooltip.
func thLabel(s string) string {
	return `<span class="n" title="` + esc(s) + `">` + esc(shorten(s, 24)) + `</span>`
}

// escNums escapes s for HTML and keeps each number in it on one line.
func escNums(s string) string {
	e := esc(s)
	return numberRE.ReplaceAllStringFunc(e, func(n string) string { return `<span class="n">` + n + `</span>` })
}

// SyncHTML writes one self-contained page (inline CSS and SVG, no script).
func SyncHTML(w io.Writer, r *events.Result) error {
	r = cleanResult(r)
	ew := &errWriter{w: w}
	title := fmt.Sprintf("Event sync: %s vs %s", r.LabelA, r.LabelB)
	fmt.Fprintf(ew, "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>%s</title>\n<style>\n%s</style></head><body>\n<h1>Event sync: %s vs %s</h1>\n",
		esc(title), syncCSS, escLabel(r.LabelA), escLabel(r.LabelB))
	syncBanner(ew, r)
	fmt.Fprintln(ew, "<h2>Events</h2>")
	overlapPanel(ew, r)
	fmt.Fprintf(ew, "<p>Key %s. McNemar p-value of the unmatched events (%s only against %s only), for information: %s. %s.</p>\n",
		esc(strings.Join(r.Keys, ", ")), escLabel(r.LabelA), escLabel(r.LabelB), escNums(pval(r.PValue)), escNums(capital(inputOrder(r))))
	if r.Parts > 1 {
		fmt.Fprintf(ew, "<p class=\"note\">%s partitions merged.</p>\n", escNums(fmt.Sprint(r.Parts)))
	}
	if len(r.Variables) > 0 {
		fmt.Fprintln(ew, "<h2>Variables</h2>\n<div class=\"wide\"><table><tr><th>variable</th><th></th><th>outside</th><th>fraction</th><th>max |a−b|<br>at</th><th>max rel<br>at</th><th>r50</th><th>r99</th><th>tolerance</th></tr>")
		at := func(k []int64) string {
			if len(k) == 0 {
				return ""
			}
			return `<br><span class="k">` + esc(keyStr(r, k)) + `</span>`
		}
		for _, v := range r.Variables {
			name := v.Name
			if v.Blinded {
				name += " (blinded)"
			}
			fmt.Fprintf(ew, "<tr><td>%s</td><td>%s</td><td>%d / %d</td><td>%s</td><td>%s%s</td><td>%s%s</td><td>%s</td><td>%s</td><td>%s</td></tr>\n",
				esc(name), verdictSpan(v.Pass), v.Outside, v.Compared, num(v.Fraction), num(v.MaxAbs.Value), at(v.MaxAbs.Key),
				num(v.MaxRel.Value), at(v.MaxRel.Key), num(v.Quantiles[0]), num(v.Quantiles[2]), "abs "+num(v.Tol.Abs)+"<br>rel "+num(v.Tol.Rel))
		}
		fmt.Fprintln(ew, "</table></div>\n<p>r50 and r99 bound the median and the 99th percentile of the relative difference from above (read from the histogram, never beyond the largest value).</p>\n<div class=\"figs\">")
		for _, v := range r.Variables {
			relHistSVG(ew, v)
		}
		fmt.Fprintln(ew, "</div>")
	}
	if len(r.Steps) > 0 {
		fmt.Fprintf(ew, "<h2>Cut flow</h2>\n<p>Counts are cumulative. Efficiencies are per step (events passing this cut among those passing the ones before) with %s%% Clopper–Pearson intervals; the test is McNemar's exact test on the common events one chain keeps and the other drops, Holm-adjusted over the steps (α = %s).</p>\n",
			escNums(fmt.Sprint(100*r.CL)), escNums(fmt.Sprint(r.Alpha)))
		cutflowSVG(ew, r)
		la, lb := thLabel(r.LabelA), thLabel(r.LabelB)
		fmt.Fprintf(ew, "<div class=\"wide\"><table><tr><th>cut</th><th>%s</th><th>%s</th><th>both</th><th>only %s</th><th>only %s</th><th>eff %s</th><th>eff %s</th><th>p</th><th>adjusted</th></tr>\n",
			la, lb, la, lb, la, lb)
		for k, s := range r.Steps {
			cls := ""
			switch {
			case k == r.FirstSplit:
				cls = ` class="split"`
			case r.FirstSplit < 0 && k == r.FirstDiscordant:
				cls = ` class="first"`
			}
			fmt.Fprintf(ew, "<tr%s><td>%s</td><td>%d</td><td>%d</td><td>%d</td><td>%d</td><td>%d</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td></tr>\n",
				cls, esc(s.Cut), s.A, s.B, s.Both, s.OnlyA, s.OnlyB, effStr(s.EffA), effStr(s.EffB), pval(s.PValue), pval(s.Adjusted))
		}
		fmt.Fprintln(ew, "</table></div>")
		if r.FirstSplit >= 0 {
			fmt.Fprintf(ew, "<p class=\"fail\">The chains part at cut %s.</p>\n", esc(r.Steps[r.FirstSplit].Cut))
		}
	}
	if len(r.Worst) > 0 {
		fmt.Fprintf(ew, "<h2>Events that fail most</h2>\n<p>Values as %s / %s.</p>\n<div class=\"wide\"><table><tr><th>key</th><th>outside</th><th>max rel</th>", escLabel(r.LabelA), escLabel(r.LabelB))
		for _, v := range r.Variables {
			fmt.Fprintf(ew, "<th>%s</th>", esc(v.Name))
		}
		fmt.Fprintln(ew, "</tr>")
		for _, e := range r.Worst {
			fmt.Fprintf(ew, "<tr><td>%s</td><td>%d</td><td>%s</td>", esc(keyStr(r, e.Key)), e.Outside, num(e.Worst))
			for j := range r.Variables {
				fmt.Fprintf(ew, "<td>%s / %s</td>", val(float64(e.A[j])), val(float64(e.B[j])))
			}
			fmt.Fprintln(ew, "</tr>")
		}
		fmt.Fprintln(ew, "</table></div>")
	}
	if r.Binning != nil {
		fmt.Fprintf(ew, "<h2>Overlap per bin of %s</h2>\n<table><tr><th>lo</th><th>hi</th>", esc(r.Binning.Var))
		if !r.Binning.Hidden {
			fmt.Fprint(ew, "<th>N_A</th><th>N_B</th><th>N_common</th>")
		}
		fmt.Fprintln(ew, "<th>ρ</th></tr>")
		for i, b := range r.Bins {
			fmt.Fprintf(ew, "<tr><td>%s</td><td>%s</td>", val(r.Binning.Edges[i]), val(r.Binning.Edges[i+1]))
			if !r.Binning.Hidden {
				fmt.Fprintf(ew, "<td>%d</td><td>%d</td><td>%d</td>", b.NA, b.NB, b.NCommon)
			}
			fmt.Fprintf(ew, "<td>%s</td></tr>\n", num(r.Rho[i]))
		}
		fmt.Fprintln(ew, "</table>")
		if r.Binning.Hidden {
			fmt.Fprintln(ew, "<p>Counts hidden: the binning variable is blinded.</p>")
		}
	}
	fmt.Fprintln(ew, "</body></html>")
	return ew.err
}

// syncBanner writes the verdict in large type with what it rests on, and
// each failure below it.
func syncBanner(w io.Writer, r *events.Result) {
	cls, word := "pass", "pass"
	if !r.Pass {
		cls, word = "fail", "fail"
	}
	outside := 0
	for _, v := range r.Variables {
		if !v.Pass {
			outside++
		}
	}
	var parts []string
	switch {
	case len(r.Variables) == 0:
	case outside == 0:
		parts = append(parts, fmt.Sprintf("%s within tolerance on %d common events", plural(len(r.Variables), "variable"), r.Common))
	default:
		parts = append(parts, fmt.Sprintf("%d of %s outside tolerance", outside, plural(len(r.Variables), "variable")))
	}
	switch {
	case len(r.Steps) == 0:
	case r.FirstSplit >= 0:
		parts = append(parts, "the cut flows part at cut "+r.Steps[r.FirstSplit].Cut)
	default:
		parts = append(parts, fmt.Sprintf("the cut flows agree over %s", plural(len(r.Steps), "cut")))
	}
	fmt.Fprintf(w, "<div class=\"banner %s\" role=\"status\"><b>%s</b>%s", cls, word, escNums(strings.Join(parts, "; ")))
	if len(r.Failures) > 0 {
		fmt.Fprint(w, "<ul>")
		for _, f := range r.Failures {
			fmt.Fprintf(w, "<li>%s</li>", escNums(f))
		}
		fmt.Fprint(w, "</ul>")
	}
	fmt.Fprintln(w, "</div>")
}

func plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return fmt.Sprintf("%d %ss", n, word)
}

// overlapPanel draws the two event lists as two offset bands whose shared
// stretch is the common events, with the counts written on each part.
func overlapPanel(w io.Writer, r *events.Result) {
	const W, H, pad = 640.0, 104.0, 10.0
	total := float64(r.OnlyA + r.Common + r.OnlyB)
	if total == 0 {
		fmt.Fprintln(w, "<p>No events.</p>")
		return
	}
	// widths proportional to counts, each part at least 90 px when present
	part := func(n int64) float64 {
		if n == 0 {
			return 0
		}
		return math.Max(90, (W-2*pad-270)*float64(n)/total)
	}
	wa, wc, wb := part(r.OnlyA), part(r.Common), part(r.OnlyB)
	scale := (W - 2*pad) / (wa + wc + wb)
	wa, wc, wb = wa*scale, wc*scale, wb*scale
	x0 := pad
	fmt.Fprintf(w, `<svg width="%g" height="%g" viewBox="0 0 %g %g" role="img" aria-label="event overlap">`+"\n", W, H, W, H)
	fmt.Fprintf(w, `<rect x="%g" y="18" width="%g" height="34" rx="6" fill="#2e2470" fill-opacity=".45"/>`+"\n", x0, wa+wc)
	fmt.Fprintf(w, `<rect x="%g" y="42" width="%g" height="34" rx="6" fill="#b07d0e" fill-opacity=".45"/>`+"\n", x0+wa, wc+wb)
	label := func(x, y float64, s string) {
		fmt.Fprintf(w, `<text x="%.1f" y="%g" text-anchor="middle" font-size="13">%s</text>`+"\n", x, y, esc(s))
	}
	if wa > 0 {
		label(x0+wa/2, 39, fmt.Sprintf("%d", r.OnlyA))
	}
	label(x0+wa+wc/2, 51, fmt.Sprintf("%d common", r.Common))
	if wb > 0 {
		label(x0+wa+wc+wb/2, 69, fmt.Sprintf("%d", r.OnlyB))
	}
	fmt.Fprintf(w, `<text x="%g" y="13" font-size="13" fill="#2e2470">%s: %d events</text>`+"\n", x0, esc(shorten(r.LabelA, 60)), r.RowsA)
	fmt.Fprintf(w, `<text x="%g" y="95" font-size="13" fill="#7a560a" text-anchor="end">%s: %d events</text>`+"\n", W-pad, esc(shorten(r.LabelB, 60)), r.RowsB)
	fmt.Fprintln(w, "</svg>")
}

// relHistSVG draws the histogram of relative differences of one variable:
// a log axis of r with a tick label at every decade (every second or third
// when they are many), the r = 0 bin drawn apart on the left, a log axis
// of event counts with its numbers, both axis titles, and the relative
// tolerance as a dashed line.
func relHistSVG(w io.Writer, v events.VarResult) {
	const W, H, L, R, T, B = 500.0, 290.0, 62.0, 14.0, 30.0, 58.0
	h := v.Hist
	var peak int64
	lo, hi := len(h), -1
	for i, c := range h {
		peak = max(peak, c)
		if c > 0 && i >= 1 {
			lo, hi = min(lo, i), max(hi, i)
		}
	}
	fmt.Fprintf(w, `<svg width="%g" height="%g" viewBox="0 0 %g %g" role="img" aria-label="relative differences of %s">`+"\n", W, H, W, H, esc(v.Name))
	name := v.Name
	if v.Blinded {
		name += " (blinded)"
	}
	verdict := "within tolerance"
	if !v.Pass {
		verdict = fmt.Sprintf("%d outside tolerance", v.Outside)
	}
	fmt.Fprintf(w, `<text x="%g" y="19" font-size="15" font-weight="600">%s</text><text x="%g" y="19" font-size="13" text-anchor="end" fill="%s">%s</text>`+"\n",
		L, esc(shorten(name, 36)), W-R, map[bool]string{true: "#1d6b35", false: "#a4161a"}[v.Pass], esc(verdict))
	if peak == 0 {
		fmt.Fprintf(w, `<text x="%g" y="%g" font-size="13" text-anchor="middle">no common events</text></svg>`+"\n", W/2, H/2)
		return
	}
	// x: the bins from two below the first occupied to two above the last,
	// at least the decade around the tolerance
	if hi < 0 {
		lo, hi = 2, 2
	}
	lo, hi = max(1, lo-2), min(len(h)-1, hi+2)
	if v.Tol.Rel > 0 && !v.Blinded {
		if tb := tolBin(v.Tol.Rel); tb >= 1 && tb < len(h) {
			lo, hi = min(lo, tb-1), max(hi, tb+1)
			lo, hi = max(1, lo), min(len(h)-1, hi)
		}
	}
	ph := H - T - B
	top := math.Pow(10, math.Ceil(math.Log10(float64(peak))+1e-9))
	if top < 10 {
		top = 10
	}
	// y: log10 of the count; a count of 1 sits a tenth of a decade above
	// the axis so that single events show
	y := func(c float64) float64 {
		if c <= 0 {
			return T + ph
		}
		return T + ph*(1-(math.Log10(c)+0.1)/(math.Log10(top)+0.1))
	}
	x0 := L + 44
	bw := (W - R - x0) / float64(hi-lo+1)
	xOf := func(i int) float64 { return x0 + float64(i-lo)*bw }
	// y grid and labels
	for e := 0.0; math.Pow(10, e) <= top; e++ {
		c := math.Pow(10, e)
		yy := y(c)
		fmt.Fprintf(w, `<line x1="%g" y1="%.1f" x2="%g" y2="%.1f" stroke="#e3e6ea"/><text x="%g" y="%.1f" font-size="13" text-anchor="end">%s</text>`+"\n",
			L, yy, W-R, yy, L-6, yy+4.5, countLabel(c))
	}
	// the r = 0 bin
	zx := L + 6
	fmt.Fprintf(w, `<rect x="%g" y="%.1f" width="20" height="%.1f" fill="#1d6b35"><title>r = 0: %d events</title></rect>`+"\n", zx, y(float64(h[0])), T+ph-y(float64(h[0])), h[0])
	fmt.Fprintf(w, `<text x="%g" y="%g" font-size="13" text-anchor="middle">0</text>`+"\n", zx+10, T+ph+17)
	for i := lo; i <= hi; i++ {
		if h[i] == 0 {
			continue
		}
		fmt.Fprintf(w, `<rect x="%.2f" y="%.1f" width="%.2f" height="%.1f" fill="#2e2470"><title>%d events</title></rect>`+"\n",
			xOf(i), y(float64(h[i])), math.Max(bw-0.6, 0.6), T+ph-y(float64(h[i])), h[i])
	}
	// decade ticks: bin 2 + 10k starts the decade 10^(HistLow+k)
	var decades []int
	for i := lo; i <= hi+1; i++ {
		if i >= 2 && (i-2)%events.HistPerDecade == 0 {
			decades = append(decades, i)
		}
	}
	every := 1 + (len(decades)-1)/6
	for k, i := range decades {
		x := xOf(i)
		fmt.Fprintf(w, `<line x1="%.1f" y1="%g" x2="%.1f" y2="%g" stroke="#4a5263"/>`, x, T+ph, x, T+ph+5)
		if k%every == 0 {
			e := events.HistLow + (i-2)/events.HistPerDecade
			fmt.Fprintf(w, `<text x="%.1f" y="%g" font-size="13" text-anchor="middle">10%s</text>`, x, T+ph+19, superscript(e))
		}
		fmt.Fprintln(w)
	}
	// the tolerance applies to the true values: on a blinded variable's
	// relative differences it would sit in the wrong place
	if v.Tol.Rel > 0 && !v.Blinded {
		if tb := tolBin(v.Tol.Rel); tb >= lo && tb <= hi {
			frac := (math.Log10(v.Tol.Rel) - (events.HistLow + float64(tb-2)/events.HistPerDecade)) * events.HistPerDecade
			x := xOf(tb) + frac*bw
			lx, anchor := x+3, "start"
			if x > W-R-80 {
				lx, anchor = x-3, "end"
			}
			fmt.Fprintf(w, `<line x1="%.1f" y1="%g" x2="%.1f" y2="%g" stroke="#a4161a" stroke-dasharray="5 3"/><text x="%.1f" y="%g" font-size="12" fill="#a4161a" text-anchor="%s">tolerance</text>`+"\n",
				x, T, x, T+ph, lx, T+12, anchor)
		}
	}
	fmt.Fprintf(w, `<line x1="%g" y1="%g" x2="%g" y2="%g" stroke="#1c2430"/><line x1="%g" y1="%g" x2="%g" y2="%g" stroke="#1c2430"/>`+"\n", L, T+ph, W-R, T+ph, L, T, L, T+ph)
	fmt.Fprintf(w, `<text x="%g" y="%g" font-size="13" text-anchor="middle">relative difference |a−b| / max(|a|, |b|)</text>`+"\n", (x0+W-R)/2, H-10)
	fmt.Fprintf(w, `<text transform="translate(16 %g) rotate(-90)" font-size="13" text-anchor="middle">events</text>`+"\n", T+ph/2)
	fmt.Fprintln(w, "</svg>")
}

// tolBin is the histogram bin of a relative tolerance.
func tolBin(rel float64) int {
	return 2 + int(math.Floor((math.Log10(rel)-events.HistLow)*events.HistPerDecade))
}

// countLabel writes 1, 10, then 10², 10³, …
func countLabel(c float64) string {
	if c < 100 {
		return fmt.Sprintf("%.0f", c)
	}
	return "10" + superscript(int(math.Round(math.Log10(c))))
}

// cutflowSVG draws each step's efficiency in both chains with its
// Clopper–Pearson interval: one column per cut, A's point left and B's
// right of the column centre, the step where the chains part shaded.
func cutflowSVG(w io.Writer, r *events.Result) {
	const W, H, L, R, T, B = 840.0, 316.0, 70.0, 16.0, 56.0, 54.0
	n := len(r.Steps)
	ylo, yhi := math.Inf(1), math.Inf(-1)
	for _, s := range r.Steps {
		for _, e := range []events.Efficiency{s.EffA, s.EffB} {
			if e.N > 0 {
				ylo, yhi = math.Min(ylo, 100*e.Lo), math.Max(yhi, 100*e.Hi)
			}
		}
	}
	if math.IsInf(ylo, 0) {
		ylo, yhi = 0, 100
	}
	pad := math.Max(0.5, 0.08*(yhi-ylo))
	ylo, yhi = math.Max(0, ylo-pad), math.Min(100, yhi+pad)
	ts := ticks(ylo, yhi, false)
	if len(ts) > 0 {
		step := tickStep(yhi - ylo)
		ylo, yhi = math.Max(0, math.Floor(ylo/step)*step), math.Min(100, math.Ceil(yhi/step)*step)
		ts = ticks(ylo, yhi, false)
	}
	labels, _ := tickLabels(ts, false)
	ph := H - T - B
	py := func(v float64) float64 { return T + ph*(1-(v-ylo)/(yhi-ylo)) }
	cw := (W - L - R) / float64(n)
	fmt.Fprintf(w, `<svg width="%g" height="%g" viewBox="0 0 %g %g" role="img" aria-label="cut-flow efficiencies">`+"\n", W, H, W, H)
	fmt.Fprintf(w, `<text x="%g" y="20" font-size="15" font-weight="600">step efficiency per cut, %s%% Clopper–Pearson intervals</text>`+"\n", L, trimFloat(100*r.CL))
	// legend
	lx := L
	fmt.Fprintf(w, `<circle cx="%g" cy="36" r="5" fill="#2e2470"/><text x="%g" y="41" font-size="13">%s</text>`, lx+5, lx+14, esc(shorten(r.LabelA, 40)))
	fmt.Fprintf(w, `<rect x="%g" y="31" width="10" height="10" fill="#b07d0e"/><text x="%g" y="41" font-size="13">%s</text>`+"\n", lx+360, lx+375, esc(shorten(r.LabelB, 40)))
	for i, t := range ts {
		yy := py(t)
		fmt.Fprintf(w, `<line x1="%g" y1="%.1f" x2="%g" y2="%.1f" stroke="#e3e6ea"/><text x="%g" y="%.1f" font-size="13" text-anchor="end">%s%%</text>`+"\n",
			L, yy, W-R, yy, L-6, yy+4.5, labels[i])
	}
	maxChars := int(cw / 8.5)
	for k, s := range r.Steps {
		cx := L + (float64(k)+0.5)*cw
		if k == r.FirstSplit {
			fmt.Fprintf(w, `<rect x="%.1f" y="%g" width="%.1f" height="%g" fill="#fde8e8"/>`+"\n", cx-cw/2, T, cw, ph)
		}
		for side, e := range []events.Efficiency{s.EffA, s.EffB} {
			if e.N == 0 {
				continue
			}
			x := cx + float64(2*side-1)*math.Min(14, cw/6)
			color := []string{"#2e2470", "#b07d0e"}[side]
			fmt.Fprintf(w, `<line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="%s" stroke-width="2"/>`, x, py(100*e.Lo), x, py(100*e.Hi), color)
			fmt.Fprintf(w, `<line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="%s" stroke-width="2"/><line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="%s" stroke-width="2"/>`,
				x-5, py(100*e.Lo), x+5, py(100*e.Lo), color, x-5, py(100*e.Hi), x+5, py(100*e.Hi), color)
			title := fmt.Sprintf("%s, %s: %s", []string{r.LabelA, r.LabelB}[side], s.Cut, effStr(e))
			if side == 0 {
				fmt.Fprintf(w, `<circle cx="%.1f" cy="%.1f" r="5" fill="%s"><title>%s</title></circle>`+"\n", x, py(100*e.Value), color, esc(title))
			} else {
				fmt.Fprintf(w, `<rect x="%.1f" y="%.1f" width="10" height="10" fill="%s"><title>%s</title></rect>`+"\n", x-5, py(100*e.Value)-5, color, esc(title))
			}
		}
		name := shorten(s.Cut, max(4, maxChars))
		color := "#1c2430"
		if k == r.FirstSplit {
			color = "#a4161a"
		}
		fmt.Fprintf(w, `<text x="%.1f" y="%g" font-size="13" text-anchor="middle" fill="%s">%s</text>`+"\n", cx, T+ph+18, color, esc(name))
		if s.Differs {
			fmt.Fprintf(w, `<text x="%.1f" y="%g" font-size="13" text-anchor="middle" fill="#a4161a">p = %s</text>`+"\n", cx, T+ph+34, esc(pval(s.Adjusted)))
		}
	}
	fmt.Fprintf(w, `<line x1="%g" y1="%g" x2="%g" y2="%g" stroke="#1c2430"/><line x1="%g" y1="%g" x2="%g" y2="%g" stroke="#1c2430"/>`+"\n", L, T+ph, W-R, T+ph, L, T, L, T+ph)
	fmt.Fprintf(w, `<text transform="translate(16 %g) rotate(-90)" font-size="13" text-anchor="middle">efficiency</text>`+"\n", T+ph/2)
	fmt.Fprintln(w, "</svg>")
}

// trimFloat writes x with up to four significant digits.
func trimFloat(x float64) string {
	return strconv.FormatFloat(x, 'g', 4, 64)
}
