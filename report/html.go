package report

import (
	"fmt"
	"html"
	"io"
	"math"
	"strings"

	"tandem/compare"
)

// HTML writes one self-contained page (inline CSS and SVG, no script, no
// network): the campaign state and overall verdict on top, a table of
// contents with failing comparisons first, and for each comparison an
// overlay of both chains' values with error bars, the pulls per bin with
// the allowed band, the pull histogram with the unit normal curve, and the
// criteria table.
func HTML(w io.Writer, s *compare.Summary) error {
	ew := &errWriter{w: w}
	title := s.Title
	if title == "" {
		title = "tandem cross-check"
	}
	fmt.Fprintf(ew, `<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>%s</title>
<style>
body{font-family:system-ui,sans-serif;margin:1.5em auto;max-width:62em;color:#1c2430;line-height:1.4}
h1{font-size:1.5em;margin-bottom:.2em}h2{font-size:1.2em;border-top:1px solid #ccd;padding-top:.8em;margin-top:2em}
.pass{color:#1d6b35}.fail{color:#a4161a;font-weight:600}
table{border-collapse:collapse;margin:.5em 0}td,th{padding:.15em .6em;border-bottom:1px solid #e3e6ea;text-align:right}
th{text-align:left;background:#f3f5f8}td:first-child{text-align:left}
.toc{columns:2;font-size:.92em}.toc li{break-inside:avoid}
.figs{display:flex;flex-wrap:wrap;gap:.6em;align-items:flex-start}.stack{display:flex;flex-direction:column;gap:.3em}
svg{background:#fff;border:1px solid #e3e6ea}
.note{background:#f6f7f9;padding:.4em .8em;border-left:3px solid #8893a4;margin:.3em 0}
.warn{background:#fff6e5;border-left-color:#d08c00}
.badge{display:inline-block;padding:0 .5em;border-radius:.3em;background:#eef1f5;font-size:.85em}
@media print{.toc{columns:1}h2{break-before:page}svg{border:none}}
</style></head><body>
`, esc(title))
	verdict := `<span class="pass">agree</span>`
	failed := 0
	for _, e := range s.Entries {
		if !e.Pass {
			failed++
		}
	}
	if failed > 0 {
		verdict = fmt.Sprintf(`<span class="fail">disagree</span> (%d of %d comparisons outside tolerance)`, failed, len(s.Entries))
	}
	fmt.Fprintf(ew, "<h1>%s</h1>\n<p>Verdict: %s</p>\n", esc(title), verdict)
	for _, n := range s.Notes {
		fmt.Fprintf(ew, "<p class=\"note\">%s</p>\n", esc(n))
	}
	fmt.Fprintln(ew, `<h3>Contents</h3><ol class="toc">`)
	for i, e := range ordered(s) {
		fmt.Fprintf(ew, `<li><a href="#c%d">%s</a> %s</li>`+"\n", i, esc(entryTitle(e)), verdictSpan(e.Pass))
	}
	fmt.Fprintln(ew, "</ol>")
	for i, e := range ordered(s) {
		entryHTML(ew, i, e)
	}
	fmt.Fprintln(ew, "<p class=\"note\">Two chains agreeing is not proof that either is right; the collaboration's own review and publication rules govern.</p>\n</body></html>")
	return ew.err
}

// maxFigureBins is the most bins the per-bin figures draw; beyond it a page
// would grow by megabytes per comparison without showing more.
const maxFigureBins = 2000

func esc(s string) string { return html.EscapeString(s) }

func verdictSpan(pass bool) string {
	if pass {
		return `<span class="pass">pass</span>`
	}
	return `<span class="fail">fail</span>`
}

func entryHTML(w io.Writer, i int, e compare.Entry) {
	fmt.Fprintf(w, `<h2 id="c%d">%s: %s</h2>`+"\n", i, esc(entryTitle(e)), verdictSpan(e.Pass))
	if e.Blinded {
		fmt.Fprintln(w, `<p><span class="badge">blinded values</span> the numbers shown are blinded; pulls and p-values equal the true ones</p>`)
	}
	a, b := "A", "B"
	if e.Teams[0] != "" {
		a, b = e.Teams[0], e.Teams[1]
	}
	limit := 0.0
	for _, c := range e.Criteria {
		if c.Name == "max |pull|" {
			limit = c.Limit
		}
	}
	fmt.Fprintln(w, `<div class="figs">`)
	if e.Bins <= maxFigureBins {
		fmt.Fprintln(w, `<div class="stack">`)
		overlaySVG(w, e, a, b)
		pullsSVG(w, e, limit)
		fmt.Fprintln(w, `</div>`)
	}
	histSVG(w, e)
	fmt.Fprintln(w, `</div>`)
	if e.Bins > maxFigureBins {
		fmt.Fprintf(w, "<p class=\"note\">%d bins are too many to draw one by one: the per-bin figures are left out; the JSON report has every pull.</p>\n", e.Bins)
	}
	fmt.Fprintln(w, "<table><tr><th>criterion</th><th>value</th><th>limit</th><th>result</th></tr>")
	for _, c := range e.Criteria {
		fmt.Fprintf(w, "<tr><td>%s</td><td>%s</td><td>%s %s</td><td>%s</td></tr>\n", esc(c.Name), num(c.Value), esc(c.Op), num(c.Limit), verdictSpan(c.Pass))
	}
	fmt.Fprintln(w, "</table>")
	for _, c := range e.Criteria {
		if !c.Pass && c.Detail != "" {
			fmt.Fprintf(w, "<p class=\"note\">%s: %s</p>\n", esc(c.Name), esc(c.Detail))
		}
	}
	fmt.Fprintf(w, "<p>Pulls: mean %s ± %s, width %s ± %s; KS D = %s (p = %s); %d runs (p = %s); χ²/ndf = %s/%d.</p>\n",
		num(e.PullMean), num(e.PullMeanErr), num(e.PullWidth), num(e.PullWidthEr), num(e.KSStat), pval(e.KSP), e.Runs, pval(e.RunsP), num(e.Chi2), e.NDF)
	for _, wn := range e.Warnings {
		fmt.Fprintf(w, "<p class=\"note warn\">%s</p>\n", esc(wn))
	}
}

// frame is a plot area in an SVG of fixed size.
type frame struct {
	w, h, left, right, top, bottom float64
	x0, x1, y0, y1                 float64
	logX, logY                     bool
}

func (f *frame) px(x float64) float64 {
	x0, x1 := f.x0, f.x1
	if f.logX {
		x, x0, x1 = math.Log10(x), math.Log10(x0), math.Log10(x1)
	}
	return f.left + (x-x0)/(x1-x0)*(f.w-f.left-f.right)
}

func (f *frame) py(y float64) float64 {
	y0, y1 := f.y0, f.y1
	if f.logY {
		y, y0, y1 = math.Log10(math.Max(y, f.y0)), math.Log10(y0), math.Log10(y1)
	}
	return f.h - f.bottom - (y-y0)/(y1-y0)*(f.h-f.top-f.bottom)
}

func (f *frame) open(w io.Writer, label, xlabel, ylabel string) {
	fmt.Fprintf(w, `<svg xmlns="http://www.w3.org/2000/svg" width="%g" height="%g" viewBox="0 0 %g %g" role="img" aria-label="%s" font-size="11" font-family="sans-serif">`+"\n",
		f.w, f.h, f.w, f.h, esc(label))
	fmt.Fprintf(w, `<rect x="%g" y="%g" width="%g" height="%g" fill="none" stroke="#99a"/>`+"\n", f.left, f.top, f.w-f.left-f.right, f.h-f.top-f.bottom)
	fmt.Fprintf(w, `<text x="%g" y="%g" text-anchor="middle">%s</text>`+"\n", (f.left+f.w-f.right)/2, f.h-4, esc(xlabel))
	fmt.Fprintf(w, `<text transform="translate(12,%g) rotate(-90)" text-anchor="middle">%s</text>`+"\n", (f.top+f.h-f.bottom)/2, esc(ylabel))
	for _, t := range ticks(f.x0, f.x1, f.logX) {
		x := f.px(t)
		fmt.Fprintf(w, `<line x1="%.1f" x2="%.1f" y1="%g" y2="%g" stroke="#99a"/><text x="%.1f" y="%g" text-anchor="middle">%s</text>`+"\n",
			x, x, f.h-f.bottom, f.h-f.bottom+4, x, f.h-f.bottom+15, num(t))
	}
	for _, t := range ticks(f.y0, f.y1, f.logY) {
		y := f.py(t)
		fmt.Fprintf(w, `<line x1="%g" x2="%g" y1="%.1f" y2="%.1f" stroke="#99a"/><text x="%g" y="%.1f" text-anchor="end">%s</text>`+"\n",
			f.left-4, f.left, y, y, f.left-6, y+4, num(t))
	}
}

// ticks returns up to about six round tick positions in [lo, hi].
func ticks(lo, hi float64, log bool) []float64 {
	var out []float64
	if log {
		for e := math.Ceil(math.Log10(lo)); e <= math.Log10(hi); e++ {
			out = append(out, math.Pow(10, e))
		}
		return out
	}
	span := hi - lo
	if !(span > 0) {
		return nil
	}
	step := math.Pow(10, math.Floor(math.Log10(span/5)))
	for _, m := range []float64{1, 2, 5, 10} {
		if span/(step*m) <= 6 {
			step *= m
			break
		}
	}
	for t := math.Ceil(lo/step) * step; t <= hi+1e-9*span; t += step {
		out = append(out, math.Round(t/step)*step)
	}
	return out
}

const (
	colorA = "#1f5fa8"
	colorB = "#d2601a"
)

func overlaySVG(w io.Writer, e compare.Entry, a, b string) {
	f := &frame{w: 420, h: 260, left: 62, right: 10, top: 22, bottom: 34, x0: e.Lo[0], x1: e.Hi[e.Bins-1]}
	lo, hi := math.Inf(1), math.Inf(-1)
	posMin := math.Inf(1)
	for i := 0; i < e.Bins; i++ {
		for _, v := range [][2]float64{{e.A[i], e.ErrA[i]}, {e.B[i], e.ErrB[i]}} {
			lo, hi = math.Min(lo, v[0]-v[1]), math.Max(hi, v[0]+v[1])
			if v[0] > 0 {
				posMin = math.Min(posMin, v[0])
			}
		}
	}
	if lo > 0 && hi/posMin > 100 {
		f.logY, f.y0, f.y1 = true, math.Pow(10, math.Floor(math.Log10(posMin/2))), math.Pow(10, math.Ceil(math.Log10(hi)))
	} else {
		pad := 0.05 * (hi - lo)
		if pad == 0 {
			pad = 1
		}
		f.y0, f.y1 = lo-pad, hi+pad
	}
	if e.Lo[0] > 0 && e.Hi[e.Bins-1]/e.Lo[0] > 100 {
		f.logX = true
	}
	ylabel := e.YLabel
	if ylabel == "" {
		ylabel = e.Column
	}
	if e.Blinded {
		ylabel += " (blinded)"
	}
	f.open(w, "values of "+a+" and "+b, e.XLabel, ylabel)
	fmt.Fprintf(w, `<text x="%g" y="14"><tspan fill="%s">■ %s</tspan>  <tspan fill="%s">● %s</tspan></text>`+"\n", f.left, colorA, esc(a), colorB, esc(b))
	for i := 0; i < e.Bins; i++ {
		x0, x1 := f.px(e.Lo[i]), f.px(e.Hi[i])
		mid := (x0 + x1) / 2
		off := (x1 - x0) / 6
		for k, v := range [][2]float64{{e.A[i], e.ErrA[i]}, {e.B[i], e.ErrB[i]}} {
			c, x := colorA, mid-off
			if k == 1 {
				c, x = colorB, mid+off
			}
			fmt.Fprintf(w, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="%s"/>`, x, x, f.py(v[0]-v[1]), f.py(v[0]+v[1]), c)
			if k == 0 {
				fmt.Fprintf(w, `<rect x="%.1f" y="%.1f" width="5" height="5" fill="%s"/>`+"\n", x-2.5, f.py(v[0])-2.5, c)
			} else {
				fmt.Fprintf(w, `<circle cx="%.1f" cy="%.1f" r="2.7" fill="%s"/>`+"\n", x, f.py(v[0]), c)
			}
		}
	}
	fmt.Fprintln(w, "</svg>")
}

func pullsSVG(w io.Writer, e compare.Entry, limit float64) {
	m := math.Max(limit, 1)
	for _, p := range e.Pulls {
		m = math.Max(m, math.Abs(p))
	}
	m = math.Ceil(m + 0.5)
	f := &frame{w: 420, h: 180, left: 62, right: 10, top: 22, bottom: 34, x0: e.Lo[0], x1: e.Hi[e.Bins-1], y0: -m, y1: m}
	f.logX = e.Lo[0] > 0 && e.Hi[e.Bins-1]/e.Lo[0] > 100
	f.open(w, "pulls per bin", e.XLabel, "pull (a − b)/σ")
	fmt.Fprintf(w, `<text x="%g" y="14">pulls per bin</text>`+"\n", f.left)
	fmt.Fprintf(w, `<line x1="%g" x2="%g" y1="%.1f" y2="%.1f" stroke="#667"/>`+"\n", f.left, f.w-f.right, f.py(0), f.py(0))
	if limit > 0 {
		for _, s := range []float64{-limit, limit} {
			fmt.Fprintf(w, `<line x1="%g" x2="%g" y1="%.1f" y2="%.1f" stroke="#a4161a" stroke-dasharray="5 3"/>`+"\n", f.left, f.w-f.right, f.py(s), f.py(s))
		}
	}
	for i, p := range e.Pulls {
		x0, x1 := f.px(e.Lo[i]), f.px(e.Hi[i])
		y := f.py(p)
		top, h := math.Min(y, f.py(0)), math.Abs(y-f.py(0))
		c := "#5a6b82"
		if limit > 0 && math.Abs(p) > limit {
			c = "#a4161a"
		}
		fmt.Fprintf(w, `<rect x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="%s"/>`+"\n", x0+0.5, top, math.Max(x1-x0-1, 0.5), h, c)
	}
	fmt.Fprintln(w, "</svg>")
}

func histSVG(w io.Writer, e compare.Entry) {
	const lo, hi, nb = -5.0, 5.0, 20
	counts := make([]float64, nb)
	for _, p := range e.Pulls {
		k := int((p - lo) / (hi - lo) * nb)
		counts[max(0, min(nb-1, k))]++
	}
	width := (hi - lo) / nb
	peak := float64(e.Bins) * width / math.Sqrt(2*math.Pi)
	top := peak
	for _, c := range counts {
		top = math.Max(top, c)
	}
	f := &frame{w: 260, h: 180, left: 40, right: 10, top: 22, bottom: 34, x0: lo, x1: hi, y0: 0, y1: top * 1.15}
	f.open(w, "pull distribution", "pull", "bins")
	fmt.Fprintf(w, `<text x="%g" y="14">pull distribution vs N(0,1)</text>`+"\n", f.left)
	for k, c := range counts {
		x0 := f.px(lo + float64(k)*width)
		x1 := f.px(lo + float64(k+1)*width)
		fmt.Fprintf(w, `<rect x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="#9fb3cc" stroke="#5a6b82"/>`+"\n", x0, f.py(c), x1-x0, f.py(0)-f.py(c))
	}
	var pts []string
	for x := lo; x <= hi+1e-9; x += 0.1 {
		y := float64(e.Bins) * width * math.Exp(-x*x/2) / math.Sqrt(2*math.Pi)
		pts = append(pts, fmt.Sprintf("%.1f,%.1f", f.px(x), f.py(y)))
	}
	fmt.Fprintf(w, `<polyline points="%s" fill="none" stroke="#a4161a" stroke-width="1.5"/>`+"\n", strings.Join(pts, " "))
	fmt.Fprintln(w, "</svg>")
}
