package report

import (
	"math"
	"slices"
	"strconv"

	"tandem/compare"
)

// Comparisons of 2-D tables (cells [xlo, xhi) × [ylo, yhi), see
// compare.Result.Cells) are reported as 1-D ones, with these differences:
// the per-cell tables give both coordinates (cell, xlo, xhi, ylo, yhi),
// the JSON report adds "cells", the edges of each pull in the order of
// "pulls", and the HTML page draws a map of the pulls and the two sides'
// values in slices of equal y (the bands of the table) instead of the
// overlay, ratio and pull panels along one axis.

// Our diverging palette for pulls: a slate blue below zero, a warm paper
// white at zero and a burnt orange above, interpolated in sRGB. The two
// ends differ in hue for the common forms of colour blindness (blue
// against orange) and in luminance from the middle, so the sign and size of
// a pull survive greyscale print.
var (
	mapNeg  = [3]float64{0x2b, 0x4c, 0x7e}
	mapZero = [3]float64{0xf6, 0xf1, 0xe7}
	mapPos  = [3]float64{0xb5, 0x4a, 0x12}
)

const (
	colorNoPull  = "#b9bcc4" // a cell without a pull (zero combined σ)
	maxSliceDraw = 12        // y bands drawn as slices at most
)

// jsonCell is the place of one pull in the JSON report of a 2-D
// comparison.
type jsonCell struct {
	XLo jnum `json:"xlo"`
	XHi jnum `json:"xhi"`
	YLo jnum `json:"ylo"`
	YHi jnum `json:"yhi"`
}

// jsonCells lists the cells of a 2-D comparison, nil for 1-D bins.
func jsonCells(r *compare.Result) []jsonCell {
	if !r.Cells() {
		return nil
	}
	out := make([]jsonCell, r.Bins)
	for i := range out {
		out[i] = jsonCell{jnum(r.Lo[i]), jnum(r.Hi[i]), jnum(r.YLo[i]), jnum(r.YHi[i])}
	}
	return out
}

// cells writes the "cells" list of the JSON report.
func (j *jsonWriter) cells(cs []jsonCell) {
	list(j, cs, func(c *jsonCell) {
		j.open('{')
		for _, kv := range [...]struct {
			k string
			v jnum
		}{{"xlo", c.XLo}, {"xhi", c.XHi}, {"ylo", c.YLo}, {"yhi", c.YHi}} {
			j.key(kv.k)
			j.num(kv.v)
		}
		j.close('}')
	})
}

// binHeads are the heads of the place columns of a per-bin table.
func binHeads(e Entry) []string {
	if e.Cells() {
		return []string{"cell", "xlo", "xhi", "ylo", "yhi"}
	}
	return []string{"bin", "lo", "hi"}
}

// appendYEdges appends the y edges of cell i of a 2-D comparison.
func appendYEdges(dst []string, e Entry, i int) []string {
	if !e.Cells() {
		return dst
	}
	return append(dst, val(e.YLo[i]), val(e.YHi[i]))
}

// yEdgesRow writes the y edges of cell i, each between pre and post.
func yEdgesRow(p *page, e Entry, i int, pre, post string) {
	if !e.Cells() {
		return
	}
	p.s(pre)
	p.b = appendG6(p.b, e.YLo[i])
	p.s(post).s(pre)
	p.b = appendG6(p.b, e.YHi[i])
	p.s(post)
}

// pullColor maps a pull to the palette over [-r, r]; beyond is the end
// colour.
func pullColor(p, r float64) string {
	if math.IsNaN(p) {
		return colorNoPull
	}
	t := math.Max(-1, math.Min(1, p/r))
	end := mapPos
	if t < 0 {
		end, t = mapNeg, -t
	}
	b := []byte{'#'}
	for k := range 3 {
		v := int(math.Round(mapZero[k] + t*(end[k]-mapZero[k])))
		b = append(b, "0123456789abcdef"[v>>4], "0123456789abcdef"[v&15])
	}
	return string(b)
}

// mapRange is the half-width of the colour scale: 3, or the largest
// finite |pull| rounded up to a whole number, at most 8.
func mapRange(pulls []float64) float64 {
	r := 3.0
	for _, p := range pulls {
		if a := math.Abs(p); !math.IsInf(a, 0) && a > r {
			r = a
		}
	}
	return math.Min(8, math.Ceil(r))
}

// cellFigures draws the pull map and the slices of a 2-D comparison.
func cellFigures(w *page, id string, e Entry, limit float64) {
	pullMapSVG(w, e, limit)
	slicesSVG(w, e)
}

// pullMapSVG draws each cell as a rectangle filled by its pull, with the
// colour scale labelled on the right; cells beyond the pull limit are
// outlined, and each cell's <title> gives its edges and pull.
func pullMapSVG(w *page, e Entry, limit float64) {
	f := &frame{w: figW, h: 520, left: figLeft, right: 150, top: 44, bottom: 50}
	f.x0, f.x1 = slices.Min(e.Lo), slices.Max(e.Hi)
	f.y0, f.y1 = slices.Min(e.YLo), slices.Max(e.YHi)
	r := mapRange(e.Pulls)
	f.open(w, "pullmap", "map of the pulls per cell", "pull per cell", e.XLabel, "y")
	for i := 0; i < e.Bins; i++ {
		x0, x1 := f.px(e.Lo[i]), f.px(e.Hi[i])
		y0, y1 := f.py(e.YHi[i]), f.py(e.YLo[i])
		p := e.Pulls[i]
		stroke := ""
		if limit > 0 && math.Abs(p) > limit {
			stroke = ` stroke="#1c2430" stroke-width="2"`
		}
		w.nums(`<rect x="%" y="%" width="%" height="%" fill="`, x0, y0, math.Max(x1-x0, 0.3), math.Max(y1-y0, 0.3))
		w.s(pullColor(p, r)).s(`"`).s(stroke).s("><title>cell ").d(i + 1).s(": x ").s(val(e.Lo[i])).s(" to ").s(val(e.Hi[i])).
			s(", y ").s(val(e.YLo[i])).s(" to ").s(val(e.YHi[i])).s(", pull ").s(pullText(p)).s("</title></rect>\n")
	}
	// the colour scale: a column of steps from -r to r, labelled
	bx, bw := f.w-f.right+28, 22.0
	top, bot := f.top, f.h-f.bottom
	const steps = 64
	for k := 0; k < steps; k++ {
		p := r - (float64(k)+0.5)*2*r/steps
		y := top + float64(k)*(bot-top)/steps
		w.nums(`<rect x="%" y="%" width="%" height="%" fill="`, bx, y, bw, (bot-top)/steps+0.5)
		w.s(pullColor(p, r)).s(`"/>` + "\n")
	}
	w.nums(`<rect x="%" y="%" width="%" height="%" fill="none" stroke="`+colorAxis+`"/>`+"\n", bx, top, bw, bot-top)
	for _, t := range []float64{-r, -r / 2, 0, r / 2, r} {
		y := top + (r-t)/(2*r)*(bot-top)
		w.nums(`<line x1="%" y1="%" x2="%" y2="%" stroke="`+colorAxis+`"/>`+"\n", bx+bw, y, bx+bw+5, y)
		w.nums(`<text x="%" y="%" font-size="`, bx+bw+8, y+5)
		w.g(tickFont).s(`">`).s(strconv.FormatFloat(t, 'g', 3, 64)).s("</text>\n")
	}
	w.s(`<text class="axis" transform="translate(`).g(bx + bw + 64).s(",").g((top + bot) / 2).s(`) rotate(-90)" text-anchor="middle">pull (a − b) / σ_d</text>` + "\n")
	w.s(`<text x="`).g(f.w - f.right).s(`" y="`).g(f.top - 10).s(`" text-anchor="end">`)
	if limit > 0 {
		w.s("outlined: |pull| > ").s(num(limit)).s("; ")
	}
	w.s(`grey: no pull</text>` + "\n")
	w.s("</svg>\n")
}

// band is a run of cells of equal y range.
type band struct{ first, last int }

func bands(e Entry) []band {
	var out []band
	for i := 0; i < e.Bins; i++ {
		if i > 0 && e.YLo[i] == e.YLo[i-1] && e.YHi[i] == e.YHi[i-1] {
			out[len(out)-1].last = i
			continue
		}
		out = append(out, band{i, i})
	}
	return out
}

// slicesSVG draws the two sides' values in each y band as the 1-D
// overlay does, at most maxSliceDraw bands: beyond, the bands holding the
// largest |pull|, in y order, with a note.
func slicesSVG(w *page, e Entry) {
	bs := bands(e)
	shown := bs
	if len(bs) > maxSliceDraw {
		worst := func(b band) float64 {
			m := 0.0
			for _, p := range e.Pulls[b.first : b.last+1] {
				if a := math.Abs(p); a > m {
					m = a
				}
			}
			return m
		}
		idx := make([]int, len(bs))
		for i := range idx {
			idx[i] = i
		}
		slices.SortStableFunc(idx, func(i, j int) int { return -cmpFloat(worst(bs[i]), worst(bs[j])) })
		idx = idx[:maxSliceDraw]
		slices.Sort(idx)
		shown = nil
		for _, i := range idx {
			shown = append(shown, bs[i])
		}
		w.s(`<p class="note">`).d(len(bs)).s(" y bands; the slices show the ").d(maxSliceDraw).s(" holding the largest |pull|.</p>\n")
	}
	a, b := e.Sides()
	for _, bd := range shown {
		r := *e.Result
		s, t := bd.first, bd.last+1
		r.Lo, r.Hi, r.A, r.B, r.ErrA, r.ErrB = r.Lo[s:t], r.Hi[s:t], r.A[s:t], r.B[s:t], r.ErrA[s:t], r.ErrB[s:t]
		r.Diff, r.SigmaDiff, r.Pulls, r.YLo, r.YHi = r.Diff[s:t], r.SigmaDiff[s:t], r.Pulls[s:t], nil, nil
		r.Bins = t - s
		sub := e
		sub.Result = &r
		w.s(`<p class="note">slice y `).s(val(e.YLo[s])).s(" to ").s(val(e.YHi[s])).s(" (cells ").d(s + 1).s(" to ").d(t).s(")</p>\n")
		gs, k := groups(r.Bins)
		overlaySVG(w, sub, a, b, gs, k)
	}
}

// cellTableHTML is binTableHTML for the cells of a 2-D comparison: both
// coordinates of each cell.
func cellTableHTML(p *page, e Entry) {
	idx, cut := rows(e.Result, Style{MaxRows: maxTableRows})
	a, b := e.Sides()
	p.s("<details><summary>Per-cell values: ")
	if cut {
		p.s("the ").d(len(idx)).s(" cells with the largest |pull| of ").d(e.Bins).s(" (the JSON report has every cell)")
	} else {
		p.s("all ").d(e.Bins).s(" cells")
	}
	p.s("</summary>\n<table><tr>")
	for _, h := range binHeads(e) {
		p.s("<th>").s(h).s("</th>")
	}
	p.s("<th>").e(a).s("</th><th>±</th><th>").e(b).s("</th><th>±</th><th>a − b</th><th>σ<sub>d</sub></th><th>pull</th></tr>\n")
	for _, i := range idx {
		p.s("<tr>")
		binRow(p, e, i, "<td>", "</td>")
		p.s("</tr>\n")
	}
	p.s("</table></details>\n")
}
