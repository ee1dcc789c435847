package report

import (
	"fmt"
	"io"
	"math"

	"tandem/compare/events"
)

// SyncHTML writes one self-contained page (inline CSS and SVG, no script):
// the verdict, an overlap panel of the two event lists, per variable the
// agreement and the histogram of relative differences, the cut-flow table
// with each step's test (the step where the chains part is marked), the
// failing events and the per-bin overlap.
func SyncHTML(w io.Writer, r *events.Result) error {
	r = cleanResult(r)
	ew := &errWriter{w: w}
	title := fmt.Sprintf("event sync: %s vs %s", r.LabelA, r.LabelB)
	fmt.Fprintf(ew, `<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>%s</title>
<style>
body{font-family:system-ui,sans-serif;margin:1.5em auto;max-width:64em;color:#1c2430;line-height:1.4}
h1{font-size:1.5em}h2{font-size:1.15em;border-top:1px solid #ccd;padding-top:.7em;margin-top:1.8em}
.pass{color:#1d6b35}.fail{color:#a4161a;font-weight:600}
table{border-collapse:collapse;margin:.5em 0}td,th{padding:.15em .6em;border-bottom:1px solid #e3e6ea;text-align:right}
th{text-align:left;background:#f3f5f8}td:first-child{text-align:left}
tr.split td{background:#fde8e8;font-weight:600}tr.first td{background:#fff6e5}
svg{background:#fff;border:1px solid #e3e6ea}.figs{display:flex;flex-wrap:wrap;gap:.6em}
.note{background:#f6f7f9;padding:.4em .8em;border-left:3px solid #8893a4}
.wide{overflow-x:auto}
</style></head><body>
<h1>%s</h1>
<p>Verdict: %s</p>
`, esc(title), esc(title), verdictSpan(r.Pass))
	for _, f := range r.Failures {
		fmt.Fprintf(ew, "<p class=\"note fail\">%s</p>\n", esc(f))
	}
	if r.Parts > 1 {
		fmt.Fprintf(ew, "<p class=\"note\">%d partitions merged.</p>\n", r.Parts)
	}
	fmt.Fprintln(ew, "<h2>Events</h2>")
	overlapPanel(ew, r)
	fmt.Fprintf(ew, "<p>McNemar p-value of the unmatched events (%s only against %s only), for information: %s</p>\n",
		esc(r.LabelA), esc(r.LabelB), pval(r.PValue))
	if len(r.Variables) > 0 {
		fmt.Fprintln(ew, "<h2>Variables</h2>\n<table><tr><th>variable</th><th>outside</th><th>fraction</th><th>max |a−b|</th><th>at</th><th>max rel</th><th>at</th><th>tolerance</th><th></th></tr>")
		for _, v := range r.Variables {
			name := v.Name
			if v.Blinded {
				name += " (blinded)"
			}
			fmt.Fprintf(ew, "<tr><td>%s</td><td>%d / %d</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td></tr>\n",
				esc(name), v.Outside, v.Compared, num(v.Fraction), num(v.MaxAbs.Value), esc(keyStr(r, v.MaxAbs.Key)),
				num(v.MaxRel.Value), esc(keyStr(r, v.MaxRel.Key)), esc(tolStr(v.Tol)), verdictSpan(v.Pass))
		}
		fmt.Fprintln(ew, "</table>\n<div class=\"figs\">")
		for _, v := range r.Variables {
			relHistSVG(ew, v)
		}
		fmt.Fprintln(ew, "</div>")
	}
	if len(r.Steps) > 0 {
		fmt.Fprintf(ew, "<h2>Cut flow</h2>\n<p>Counts are cumulative. Efficiencies are per step with %g%% Clopper–Pearson intervals; the test is McNemar's exact test on the common events one chain keeps and the other drops, Holm-adjusted over the steps (α = %g).</p>\n", 100*r.CL, r.Alpha)
		fmt.Fprintf(ew, "<div class=\"wide\"><table><tr><th>cut</th><th>%s</th><th>%s</th><th>both</th><th>only %s</th><th>only %s</th><th>eff %s</th><th>eff %s</th><th>p</th><th>adjusted</th></tr>\n",
			esc(r.LabelA), esc(r.LabelB), esc(r.LabelA), esc(r.LabelB), esc(r.LabelA), esc(r.LabelB))
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
		fmt.Fprintf(ew, "<h2>Events that fail most</h2>\n<p>Values as %s / %s.</p>\n<div class=\"wide\"><table><tr><th>key</th><th>outside</th><th>max rel</th>", esc(r.LabelA), esc(r.LabelB))
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
	}
	fmt.Fprintln(ew, "</body></html>")
	return ew.err
}

// overlapPanel draws the two event lists as two offset bands whose shared
// stretch is the common events, with the counts written on each part.
func overlapPanel(w io.Writer, r *events.Result) {
	const W, H, pad = 560.0, 96.0, 10.0
	total := float64(r.OnlyA + r.Common + r.OnlyB)
	if total == 0 {
		fmt.Fprintln(w, "<p>No events.</p>")
		return
	}
	// widths proportional to counts, each part at least 60 px when present
	part := func(n int64) float64 {
		if n == 0 {
			return 0
		}
		return math.Max(60, (W-2*pad-180)*float64(n)/total)
	}
	wa, wc, wb := part(r.OnlyA), part(r.Common), part(r.OnlyB)
	scale := (W - 2*pad) / (wa + wc + wb)
	wa, wc, wb = wa*scale, wc*scale, wb*scale
	x0 := pad
	fmt.Fprintf(w, `<svg width="%g" height="%g" viewBox="0 0 %g %g" role="img" aria-label="event overlap">`+"\n", W, H, W, H)
	fmt.Fprintf(w, `<rect x="%g" y="14" width="%g" height="34" rx="6" fill="#3b6ea5" fill-opacity=".55"/>`+"\n", x0, wa+wc)
	fmt.Fprintf(w, `<rect x="%g" y="38" width="%g" height="34" rx="6" fill="#c2772b" fill-opacity=".55"/>`+"\n", x0+wa, wc+wb)
	label := func(x, y float64, s string) {
		fmt.Fprintf(w, `<text x="%g" y="%g" text-anchor="middle" font-size="12">%s</text>`+"\n", x, y, esc(s))
	}
	if wa > 0 {
		label(x0+wa/2, 35, fmt.Sprintf("%d", r.OnlyA))
	}
	label(x0+wa+wc/2, 47, fmt.Sprintf("%d common", r.Common))
	if wb > 0 {
		label(x0+wa+wc+wb/2, 65, fmt.Sprintf("%d", r.OnlyB))
	}
	fmt.Fprintf(w, `<text x="%g" y="11" font-size="11" fill="#3b6ea5">%s: %d</text>`+"\n", x0, esc(r.LabelA), r.RowsA)
	fmt.Fprintf(w, `<text x="%g" y="88" font-size="11" fill="#c2772b" text-anchor="end">%s: %d</text>`+"\n", W-pad, esc(r.LabelB), r.RowsB)
	fmt.Fprintln(w, "</svg>")
}

// relHistSVG draws the histogram of relative differences of one variable
// on a log axis, with the r = 0 bin drawn apart on the left.
func relHistSVG(w io.Writer, v events.VarResult) {
	const W, H, L, R, T, B = 330.0, 190.0, 44.0, 10.0, 22.0, 34.0
	h := v.Hist
	var peak int64
	lo, hi := len(h), -1
	for i, c := range h {
		if c > peak {
			peak = c
		}
		if c > 0 && i >= 1 {
			lo, hi = min(lo, i), max(hi, i)
		}
	}
	fmt.Fprintf(w, `<svg width="%g" height="%g" viewBox="0 0 %g %g" role="img" aria-label="relative differences of %s">`+"\n", W, H, W, H, esc(v.Name))
	fmt.Fprintf(w, `<text x="%g" y="14" font-size="12">%s: relative difference |a−b|/max(|a|,|b|)</text>`+"\n", L-30, esc(v.Name))
	if peak == 0 {
		fmt.Fprintf(w, `<text x="%g" y="%g" font-size="12">no common events</text></svg>`+"\n", W/2-50, H/2)
		return
	}
	if hi < 0 {
		lo, hi = 2, 2
	}
	lo, hi = max(1, lo-2), min(len(h)-1, hi+2)
	ph := H - T - B
	y := func(c int64) float64 { return T + ph*(1-math.Log1p(float64(c))/math.Log1p(float64(peak))) }
	// the r = 0 bin
	zx := L
	fmt.Fprintf(w, `<rect x="%g" y="%g" width="14" height="%g" fill="#1d6b35"/>`+"\n", zx, y(h[0]), T+ph-y(h[0]))
	fmt.Fprintf(w, `<text x="%g" y="%g" font-size="10" text-anchor="middle">0</text>`+"\n", zx+7, H-B+12)
	x0 := L + 22
	bw := (W - R - x0) / float64(hi-lo+1)
	for i := lo; i <= hi; i++ {
		if h[i] == 0 {
			continue
		}
		x := x0 + float64(i-lo)*bw
		fmt.Fprintf(w, `<rect x="%.2f" y="%.2f" width="%.2f" height="%.2f" fill="#3b6ea5"/>`+"\n", x, y(h[i]), math.Max(bw-0.5, 0.5), T+ph-y(h[i]))
	}
	for i := lo; i <= hi+1; i++ {
		if i >= 2 && (i-2)%events.HistPerDecade == 0 {
			x := x0 + float64(i-lo)*bw
			e := events.HistLow + (i-2)/events.HistPerDecade
			fmt.Fprintf(w, `<line x1="%.2f" y1="%g" x2="%.2f" y2="%g" stroke="#8893a4"/><text x="%.2f" y="%g" font-size="10" text-anchor="middle">1e%d</text>`+"\n",
				x, T+ph, x, T+ph+4, x, H-B+12, e)
		}
	}
	fmt.Fprintf(w, `<line x1="%g" y1="%g" x2="%g" y2="%g" stroke="#1c2430"/>`+"\n", L, T+ph, W-R, T+ph)
	fmt.Fprintf(w, `<text x="%g" y="%g" font-size="10">events (log scale), peak %d</text>`+"\n", L, H-6, peak)
	fmt.Fprintln(w, "</svg>")
}
