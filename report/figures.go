package report

import (
	"bytes"
	"math"
	"slices"
	"strings"
	"unicode/utf8"
)

// The figures are SVG drawn in a 1000-unit-wide coordinate system that the
// page scales to its full width; text sizes are chosen so that tick labels
// stay at least 12 px tall down to a 900 px wide page.
const (
	figW        = 1000.0
	figLeft     = 96.0
	figRight    = 24.0
	tickFont    = 15.0
	labelFont   = 16.0
	maxDrawBins = 2000 // beyond this the overlay is decimated
	drawGroups  = 1000 // the number of groups a decimated overlay draws
)

// Our palette: a dark indigo for side A (points) and a dark ochre for side
// B (steps). They differ in hue for every common form of colour blindness
// (blue against yellow) and by a factor of about seven in luminance, so
// they stay apart in greyscale print; the two sides also differ in shape.
const (
	colorA    = "#2e2470"
	colorB    = "#b07d0e"
	colorBand = "#d3d6de" // combined uncertainty band of the ratio panel
	colorBar  = "#66728a" // pulls within the limit
	colorOut  = "#8a1c12" // pulls beyond the limit, limit lines, the normal curve
	colorAxis = "#4a5263"
)

// frame is a plot area in an SVG of fixed size.
type frame struct {
	w, h, left, right, top, bottom float64
	x0, x1, y0, y1                 float64
	logX, logY                     bool
	// xTicks, when set, limits the x ticks to this range (a histogram's
	// overflow bars lie outside the axis proper).
	xTicks *[2]float64
	// log holds log₁₀ of x0, x1, y0 and y1 for log axes, once logged.
	log    [4]float64
	logged bool
}

func (f *frame) px(x float64) float64 {
	x0, x1 := f.x0, f.x1
	if f.logX {
		f.logs()
		x, x0, x1 = math.Log10(math.Max(x, f.x0)), f.log[0], f.log[1]
	}
	return f.left + (x-x0)/(x1-x0)*(f.w-f.left-f.right)
}

func (f *frame) py(y float64) float64 {
	y0, y1 := f.y0, f.y1
	if f.logY {
		f.logs()
		y, y0, y1 = math.Log10(math.Max(y, f.y0)), f.log[2], f.log[3]
	}
	return f.h - f.bottom - (y-y0)/(y1-y0)*(f.h-f.top-f.bottom)
}

// logs fills f.log once the axes' ranges are known (a frame's range does
// not change once drawing starts).
func (f *frame) logs() {
	if !f.logged {
		f.log = [4]float64{math.Log10(f.x0), math.Log10(f.x1), math.Log10(f.y0), math.Log10(f.y1)}
		f.logged = true
	}
}

// clampY limits y to the plot range and says whether it was outside.
func (f *frame) clampY(y float64) (float64, int) {
	switch {
	case y > f.y1:
		return f.y1, 1
	case y < f.y0:
		return f.y0, -1
	}
	return y, 0
}

// open starts the SVG: frame, axes with ticks in one format each, the axis
// labels (xlabel may be empty for panels that share the x axis of the one
// below) and the panel title on the top left.
func (f *frame) open(w *page, class, label, title, xlabel, ylabel string) {
	w.s(`<svg xmlns="http://www.w3.org/2000/svg" class="`).s(class).s(`" width="`).g(f.w).s(`" height="`).g(f.h).s(`" viewBox="0 0 `).g(f.w).s(" ").g(f.h).
		s(`" role="img" aria-label="`).e(label).s(`" font-size="`).g(labelFont).s(`" font-family="DejaVu Sans, Verdana, sans-serif" fill="#1c2430">` + "\n")
	w.s(`<rect x="`).g(f.left).s(`" y="`).g(f.top).s(`" width="`).g(f.w - f.left - f.right).s(`" height="`).g(f.h - f.top - f.bottom).s(`" fill="none" stroke="` + colorAxis + `"/>` + "\n")
	if title != "" {
		w.s(`<text x="`).g(f.left).s(`" y="`).g(f.top - 10).s(`" font-weight="bold">`).e(title).s("</text>\n")
	}
	xa := w.axis(f, true)
	w.b = append(w.b, xa.text[:xa.split]...)
	if xlabel != "" || xa.mult != "" {
		if xa.mult != "" {
			xlabel = strings.TrimSpace(xlabel + " " + xa.mult)
		}
		w.s(`<text class="axis" x="`).g((f.left + f.w - f.right) / 2).s(`" y="`).g(f.h - 12).s(`" text-anchor="middle">`).e(xlabel).s("</text>\n")
	}
	w.b = append(w.b, xa.text[xa.split:]...)
	ya := w.axis(f, false)
	w.b = append(w.b, ya.text...)
	ym := ya.mult
	if ym != "" {
		ylabel = strings.TrimSpace(ylabel + " " + ym)
	}
	w.s(`<text class="axis" transform="translate(20,`).g((f.top+f.h-f.bottom)/2).s(`) rotate(-90)" text-anchor="middle">`).et(ylabel, true).s("</text>\n")
}

// axis is the drawn ticks of one axis of a frame: for x the major ticks
// with their labels, then (from split on) the minor ticks of a log axis;
// for y the minor ticks, then the major ones with their labels. mult is
// the common factor of the labels, for the axis label.
type axis struct {
	text  []byte
	split int
	mult  string
}

// axisKey is all an axis's drawing depends on: the frame's geometry and
// the axis's range, scale and tick range.
type axisKey struct {
	x                              bool
	w, h, left, right, top, bottom float64
	lo, hi                         float64
	log                            bool
	ticks                          [2]float64
}

// maxAxes bounds the axes a page remembers.
const maxAxes = 512

// axis returns the ticks of f's x or y axis, valid until the next call
// when the page does not keep it. A campaign's figures repeat
// a few axes (every pull histogram has one of four x axes, every pull
// panel one of a few y axes, and observables with the same binning share
// x axes), so the page draws each once.
func (w *page) axis(f *frame, x bool) *axis {
	k := axisKey{x: x, w: f.w, h: f.h, left: f.left, right: f.right, top: f.top, bottom: f.bottom}
	if x {
		k.lo, k.hi, k.log, k.ticks = f.x0, f.x1, f.logX, [2]float64{f.x0, f.x1}
		if f.xTicks != nil {
			k.ticks = *f.xTicks
		}
	} else {
		k.lo, k.hi, k.log = f.y0, f.y1, f.logY
	}
	if a, ok := w.axes[k]; ok {
		return a
	}
	a := &axis{}
	d := &page{b: w.axisTmp[:0]}
	if x {
		xt := ticks(k.ticks[0], k.ticks[1], f.logX)
		xl, xm := tickLabels(xt, f.logX)
		for i, t := range xt {
			x := f.px(t)
			d.s(`<line x1="`).f1(x).s(`" x2="`).f1(x).s(`" y1="`).g(f.h - f.bottom).s(`" y2="`).g(f.h - f.bottom + 6).s(`" stroke="` + colorAxis + `"/><text class="tick" x="`).f1(x).
				s(`" y="`).g(f.h - f.bottom + 23).s(`" text-anchor="middle" font-size="`).g(tickFont).s(`">`).s(xl[i]).s("</text>\n")
		}
		a.split, a.mult = len(d.b), xm
		if f.logX {
			for _, t := range minorTicks(f.x0, f.x1) {
				x := f.px(t)
				d.s(`<line x1="`).f1(x).s(`" x2="`).f1(x).s(`" y1="`).g(f.h - f.bottom).s(`" y2="`).g(f.h - f.bottom + 3).s(`" stroke="` + colorAxis + `"/>`)
			}
		}
	} else {
		if f.logY {
			for _, t := range minorTicks(f.y0, f.y1) {
				y := f.py(t)
				d.s(`<line x1="`).g(f.left - 3).s(`" x2="`).g(f.left).s(`" y1="`).f1(y).s(`" y2="`).f1(y).s(`" stroke="` + colorAxis + `"/>`)
			}
		}
		yt := ticks(f.y0, f.y1, f.logY)
		yl, ym := tickLabels(yt, f.logY)
		for i, t := range yt {
			y := f.py(t)
			d.s(`<line x1="`).g(f.left - 6).s(`" x2="`).g(f.left).s(`" y1="`).f1(y).s(`" y2="`).f1(y).s(`" stroke="` + colorAxis + `"/><text class="tick" x="`).g(f.left - 9).
				s(`" y="`).f1(y + 5).s(`" text-anchor="end" font-size="`).g(tickFont).s(`">`).s(yl[i]).s("</text>\n")
		}
		a.mult = ym
	}
	// an axis the page keeps gets its own copy; any other is used at once
	// and its buffer reused for the next
	w.axisTmp, a.text = d.b, d.b
	if w.axes == nil {
		w.axes = map[axisKey]*axis{}
	}
	if len(w.axes) < maxAxes {
		a.text = bytes.Clone(d.b)
		w.axes[k] = a
	}
	return a
}

// group is a run of consecutive bins drawn as one: a single bin, or in a
// decimated figure a block of k bins.
type group struct{ first, last int }

// groups splits n bins into drawn groups: one per bin up to maxDrawBins,
// else about drawGroups blocks of equal size. k is the block size.
func groups(n int) (gs []group, k int) {
	k = 1
	if n > maxDrawBins {
		k = (n + drawGroups - 1) / drawGroups
	}
	for i := 0; i < n; i += k {
		gs = append(gs, group{i, min(i+k, n) - 1})
	}
	return gs, k
}

func xFrame(e Entry) (x0, x1 float64, logX bool) {
	x0, x1 = e.Lo[0], e.Hi[e.Bins-1]
	if x1 <= x0 {
		x1 = x0 + 1
	}
	return x0, x1, x0 > 0 && x1/x0 > 100
}

// figure draws the three panels of one comparison that share the x axis:
// the two chains' values, their ratio with the combined uncertainty band,
// and the pulls.
func figure(w *page, id string, e Entry, limit float64) {
	a, b := e.Sides()
	gs, k := groups(e.Bins)
	overlaySVG(w, e, a, b, gs, k)
	// Blinding maps every value by one affine map v → s·v + t per bin,
	// which keeps differences in units of their uncertainty (the pulls)
	// but not ratios: a blinded ratio says nothing about the true one.
	if !e.Blinded {
		ratioSVG(w, e, a, b, gs, k)
	}
	pullsSVG(w, e, limit, gs, k)
}

func overlaySVG(w *page, e Entry, a, b string, gs []group, k int) {
	f := &frame{w: figW, h: 360, left: figLeft, right: figRight, top: 44, bottom: 44}
	f.x0, f.x1, f.logX = xFrame(e)
	lo, hi := math.Inf(1), math.Inf(-1)
	posMin := math.Inf(1)
	finite, positive := 0, 0
	for i := 0; i < e.Bins; i++ {
		for _, v := range [][2]float64{{e.A[i], e.ErrA[i]}, {e.B[i], e.ErrB[i]}} {
			if math.IsNaN(v[0]) || math.IsInf(v[0], 0) {
				continue
			}
			finite++
			lo, hi = math.Min(lo, v[0]-v[1]), math.Max(hi, v[0]+v[1])
			if v[0] > 0 {
				positive++
				posMin = math.Min(posMin, v[0])
			}
		}
	}
	if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		lo, hi = 0, 1
	}
	// A log axis when the values span more than two decades and nearly
	// all are positive; the others cannot be drawn on it and are counted.
	if positive > 0 && float64(positive) >= 0.9*float64(finite) && hi/posMin > 100 {
		f.logY, f.y0, f.y1 = true, math.Pow(10, math.Floor(math.Log10(posMin/2))), math.Pow(10, math.Ceil(math.Log10(hi)))
	} else {
		pad := 0.06 * (hi - lo)
		if pad == 0 {
			pad = math.Max(1, math.Abs(hi)*0.1)
		}
		f.y0, f.y1 = lo-pad, hi+pad
	}
	ylabel := e.YLabel
	if ylabel == "" {
		ylabel = e.Column
	}
	if e.Blinded {
		ylabel += " (blinded)"
	}
	f.open(w, "overlay", "values of "+a+" and "+b, "", "", ylabel)
	if f.logY && positive < finite {
		w.s(`<text class="overflow-note" x="`).g(f.left + 8).s(`" y="`).g(f.h - f.bottom - 8).s(`">`).d(finite - positive).s(" values ≤ 0 not drawn on the log axis</text>\n")
	}
	// the legend, on the title row
	la, lb := "value ± σ, bar = bin width", "step ± σ band"
	if k > 1 {
		la, lb = "band = lowest to highest value per group", "lines = lowest and highest"
	}
	w.s(`<text x="`).g(f.left).s(`" y="`).g(f.top - 10).s(`"><tspan fill="` + colorA + `">◇ `)
	svgName(w, a, 28)
	w.s(": ").s(la).s(`</tspan><tspan dx="18" fill="` + colorB + `">▭ `)
	svgName(w, b, 28)
	w.s(": ").s(lb).s("</tspan></text>\n")
	if k > 1 {
		overlayDecimated(w, f, e, gs)
	} else {
		overlayBins(w, f, e)
	}
	w.s("</svg>\n")
}

// overlayBins draws B as a step with its ±σ band and A as open diamonds
// with error bars and caps drawn on top, so a bar shorter than the marker
// still shows through it.
func overlayBins(w *page, f *frame, e Entry) {
	ok := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) && (!f.logY || v > 0) }
	step := w.scratch[:0]
	pen := false
	for i := 0; i < e.Bins; i++ {
		x0, x1 := f.px(e.Lo[i]), f.px(e.Hi[i])
		v, s := e.B[i], e.ErrB[i]
		if !ok(v) {
			pen = false
			continue
		}
		lo, _ := f.clampY(v - s)
		hi, _ := f.clampY(v + s)
		w.nums(`<rect x="%" y="%" width="%" height="%" fill="`+colorB+`" fill-opacity="0.28"/>`+"\n", x0, f.py(hi), math.Max(x1-x0, 0.3), math.Max(f.py(lo)-f.py(hi), 0))
		y := f.py(v)
		if pen && i > 0 && e.Lo[i] == e.Hi[i-1] {
			step = appendF1(append(appendF1(append(step, " V"...), y), " H"...), x1)
		} else {
			step = appendF1(append(appendF1(append(appendF1(append(step, " M"...), x0), ','), y), " H"...), x1)
		}
		pen = true
	}
	if len(step) > 0 {
		w.s(`<path d="`)
		w.b = append(w.b, step[1:]...) // without the leading space
		w.s(`" fill="none" stroke="` + colorB + `" stroke-width="2"/>` + "\n")
	}
	w.scratch = step
	binPx := (f.w - f.left - f.right) / float64(e.Bins)
	r := math.Max(1.6, math.Min(6, binPx*0.3))
	capW := math.Max(r+1.5, math.Min(7, binPx*0.4))
	// The diamond's sides and the caps are the same for every bin, and
	// each bin's coordinates repeat within its marks: each is formatted
	// once.
	var diamond, capText, xt, lot, hit, capX [32]byte
	tail := appendF1(append(appendF1(append(appendF1(append(diamond[:0], " l"...), r), ','), r), " l"...), -r)
	tail = appendF1(append(appendF1(append(appendF1(append(tail, ','), r), " l"...), -r), ','), -r)
	caps := appendF1(capText[:0], capW)
	for i := 0; i < e.Bins; i++ {
		v, s := e.A[i], e.ErrA[i]
		if !ok(v) {
			continue
		}
		x0, x1 := f.px(e.Lo[i]), f.px(e.Hi[i])
		x, y := (x0+x1)/2, f.py(v)
		lo, _ := f.clampY(v - s)
		hi, _ := f.clampY(v + s)
		xs, los, his, cx := appendF1(xt[:0], x), appendF1(lot[:0], f.py(lo)), appendF1(hit[:0], f.py(hi)), appendF1(capX[:0], x-capW/2)
		w.nums(`<path d="M%,% H%" stroke="`+colorA+`" stroke-width="1.5"/>`, x0, y, x1)
		w.s(`<path d="M`).raw(xs).s(",").f1(y - r).raw(tail).s(` z" fill="#fff" stroke="` + colorA + `" stroke-width="1.6"/>`)
		w.s(`<path d="M`).raw(xs).s(",").raw(los).s(" V").raw(his).s(" M").raw(cx).s(",").raw(los).s(" h").raw(caps).
			s(" M").raw(cx).s(",").raw(his).s(" h").raw(caps).s(`" stroke="` + colorA + `" stroke-width="1.6"/>` + "\n")
	}
}

// overlayDecimated draws, per group of bins, the range from the lowest to
// the highest value of each side: A as a filled band, B as two step lines.
func overlayDecimated(w *page, f *frame, e Entry, gs []group) {
	var lines [2][]byte
	for _, g := range gs {
		x0, x1 := f.px(e.Lo[g.first]), f.px(e.Hi[g.last])
		aLo, aHi := extent(e.A[g.first : g.last+1])
		bLo, bHi := extent(e.B[g.first : g.last+1])
		if !math.IsInf(aLo, 0) && (!f.logY || aHi > 0) {
			lo, _ := f.clampY(aLo)
			hi, _ := f.clampY(aHi)
			w.nums(`<rect x="%" y="%" width="%" height="%" fill="`+colorA+`" fill-opacity="0.7"/>`+"\n",
				x0, f.py(hi), math.Max(x1-x0, 0.3), math.Max(f.py(lo)-f.py(hi), 1))
		}
		if !math.IsInf(bLo, 0) && (!f.logY || bHi > 0) {
			for j, v := range [2]float64{bLo, bHi} {
				y, _ := f.clampY(v)
				if len(lines[j]) == 0 {
					lines[j] = appendF1(append(appendF1(append(appendF1(append(lines[j], 'M'), x0), ','), f.py(y)), " H"...), x1)
				} else {
					lines[j] = appendF1(append(appendF1(append(lines[j], " V"...), f.py(y)), " H"...), x1)
				}
			}
		}
	}
	for _, l := range lines {
		if len(l) > 0 {
			w.s(`<path d="`)
			w.b = append(w.b, l...)
			w.s(`" fill="none" stroke="` + colorB + `" stroke-width="1.6"/>` + "\n")
		}
	}
}

// extent returns the smallest and largest finite value of xs (±Inf when
// there is none).
func extent(xs []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range xs {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	return lo, hi
}

// ratioSVG draws a/b per bin over the band 1 ± σ_d/|b|, the combined
// uncertainty of the difference relative to b: a point outside the band is
// a pull beyond ±1, on the same side as the pull (a − b)/σ_d of the panel
// below. Bins with b = 0 have no ratio and are left out. Points
// beyond the axis range are drawn as triangles on its edge.
func ratioSVG(w *page, e Entry, a, b string, gs []group, k int) {
	f := &frame{w: figW, h: 200, left: figLeft, right: figRight, top: 30, bottom: 40}
	f.x0, f.x1, f.logX = xFrame(e)
	ratio := make([]float64, e.Bins)
	band := make([]float64, e.Bins)
	var devs, bands []float64
	for i := range ratio {
		ratio[i], band[i] = math.NaN(), math.NaN()
		if e.B[i] == 0 || math.IsNaN(e.B[i]) || math.IsInf(e.B[i], 0) {
			continue
		}
		ratio[i] = e.A[i] / e.B[i]
		band[i] = e.SigmaDiff[i] / math.Abs(e.B[i])
		if !math.IsInf(band[i], 0) && !math.IsNaN(band[i]) {
			bands = append(bands, band[i])
		}
	}
	for _, g := range gs {
		lo, hi := extent(ratio[g.first : g.last+1])
		if !math.IsInf(lo, 0) {
			devs = append(devs, math.Max(math.Abs(lo-1), math.Abs(hi-1)))
		}
	}
	// The axis covers every point, unless some lie more than three times
	// as far from 1 as nine in ten of the points (49 in 50 when there are
	// many) and of the band: such outliers would squash the others, and
	// are marked on the edge instead. The band is cut at the edge.
	q := 0.9
	if len(gs) >= 100 {
		q = 0.98
	}
	typical := math.Max(quantile(bands, q), quantile(devs, q))
	half := math.Min(quantile(devs, 1), 3*typical)
	half = math.Max(half, typical)
	if half == 0 || math.IsInf(half, 0) || math.IsNaN(half) {
		half = 0.01
	}
	f.y0, f.y1 = 1-1.1*half, 1+1.1*half
	ylabel := "ratio"
	if utf8.RuneCountInString(a+b) <= 14 {
		ylabel = a + " / " + b
	}
	f.open(w, "ratio", "ratio "+a+" / "+b, "ratio "+shorten(a, 14)+" / "+shorten(b, 14)+", band = combined uncertainty", "", ylabel)
	w.s(`<line x1="`).g(f.left).s(`" x2="`).g(f.w - f.right).s(`" y1="`).f1(f.py(1)).s(`" y2="`).f1(f.py(1)).s(`" stroke="` + colorAxis + `"/>` + "\n")
	over := 0
	for _, g := range gs {
		x0, x1 := f.px(e.Lo[g.first]), f.px(e.Hi[g.last])
		u := math.Inf(-1)
		for _, v := range band[g.first : g.last+1] {
			if !math.IsNaN(v) {
				u = math.Max(u, v)
			}
		}
		if !math.IsInf(u, 0) {
			hi, _ := f.clampY(1 + u)
			lo, _ := f.clampY(1 - u)
			w.nums(`<rect x="%" y="%" width="%" height="%" fill="`+colorBand+`"/>`+"\n", x0, f.py(hi), math.Max(x1-x0, 0.3), f.py(lo)-f.py(hi))
		}
	}
	for _, g := range gs {
		x0, x1 := f.px(e.Lo[g.first]), f.px(e.Hi[g.last])
		rLo, rHi := extent(ratio[g.first : g.last+1])
		if math.IsInf(rLo, 0) {
			continue
		}
		lo, s0 := f.clampY(rLo)
		hi, s1 := f.clampY(rHi)
		if k > 1 {
			w.nums(`<rect x="%" y="%" width="%" height="%" fill="`+colorB+`"/>`+"\n", x0, f.py(hi), math.Max(x1-x0, 0.3), math.Max(f.py(lo)-f.py(hi), 1))
		} else if s0 == 0 {
			y := f.py(lo)
			w.nums(`<path d="M%,% H%" stroke="`+colorA+`" stroke-width="1.5"/><circle cx="%" cy="%" r="%" fill="`+colorA+`"/>`+"\n",
				x0, y, x1, (x0+x1)/2, y, math.Max(1.5, math.Min(4, (x1-x0)*0.25)))
		}
		for _, s := range [2]int{s0, s1} {
			if s != 0 {
				over++
				overflowMark(w, f, (x0+x1)/2, s)
				break
			}
		}
	}
	if over > 0 {
		w.s(`<text class="overflow-note" x="`).g(f.w - f.right).s(`" y="`).g(f.top - 10).s(`" text-anchor="end">`).d(over).s(" beyond the axis (▲▼)</text>\n")
	}
	w.s("</svg>\n")
}

// shorten fits a long name into n characters with an ellipsis in the
// middle, keeping its start (the folder) and its end (the file name and
// extension), e.g. "heron/long/…/spectrum.csv".
func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n || n < 3 {
		return s
	}
	tail := (n - 1) / 2
	head := n - 1 - tail
	return string(r[:head]) + "…" + string(r[len(r)-tail:])
}

// svgName appends a name shortened to n characters, with the whole name
// in a <title> (a tooltip) when it was shortened.
func svgName(w *page, s string, n int) {
	short := shorten(s, n)
	if short == s {
		w.e(s)
		return
	}
	w.s("<tspan><title>").e(s).s("</title>").e(short).s("</tspan>")
}

// quantile returns the q-quantile of xs (the nearest rank), 0 for none.
func quantile(xs []float64, q float64) float64 {
	if len(xs) == 0 {
		return 0
	}
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[min(len(s)-1, int(math.Ceil(q*float64(len(s))))-1+boolInt(q == 0))]
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// overflowMark draws a triangle on the top (side > 0) or bottom edge of the
// plot, pointing out of it.
func overflowMark(w *page, f *frame, x float64, side int) {
	if side > 0 {
		y := f.top
		w.nums(`<path class="overflow" d="M%,% l6,11 h-12 z" fill="`+colorOut+`"/>`+"\n", x, y+1)
	} else {
		y := f.h - f.bottom
		w.nums(`<path class="overflow" d="M%,% l6,-11 h-12 z" fill="`+colorOut+`"/>`+"\n", x, y-1)
	}
}

// pullRange is the half-range of the pull axis: wide enough for the limit
// and the largest pull, but at most max(8, limit + 3); larger pulls are
// marked as overflow.
func pullRange(pulls []float64, limit float64) float64 {
	m := math.Max(limit, 2)
	for _, p := range pulls {
		if !math.IsNaN(p) {
			m = math.Max(m, math.Abs(p))
		}
	}
	return math.Min(math.Ceil(m+0.5), math.Max(8, math.Ceil(limit)+3))
}

// pullsSVG draws the pull of each bin as a bar from zero, with the limit as
// dashed lines. In a decimated figure each group shows its largest |pull|,
// so no outlier disappears. Bars beyond the axis end in a triangle.
func pullsSVG(w *page, e Entry, limit float64, gs []group, k int) {
	m := pullRange(e.Pulls, limit)
	f := &frame{w: figW, h: 230, left: figLeft, right: figRight, top: 30, bottom: 62, y0: -m, y1: m}
	f.x0, f.x1, f.logX = xFrame(e)
	f.open(w, "pulls", "pulls per bin", "pull per bin", e.XLabel, "(a − b) / σ_d")
	w.s(`<line x1="`).g(f.left).s(`" x2="`).g(f.w - f.right).s(`" y1="`).f1(f.py(0)).s(`" y2="`).f1(f.py(0)).s(`" stroke="` + colorAxis + `"/>` + "\n")
	if limit > 0 && limit < m {
		for _, s := range [2]float64{-limit, limit} {
			w.s(`<line x1="`).g(f.left).s(`" x2="`).g(f.w - f.right).s(`" y1="`).f1(f.py(s)).s(`" y2="`).f1(f.py(s)).s(`" stroke="` + colorOut + `" stroke-dasharray="7 4"/>` + "\n")
		}
	}
	zero := map[int]bool{}
	for _, z := range e.ZeroSigma {
		zero[z] = true
	}
	var over []float64
	for _, g := range gs {
		p, ok := 0.0, false
		for i := g.first; i <= g.last; i++ {
			if !zero[i] && (!ok || math.Abs(e.Pulls[i]) > math.Abs(p)) {
				p, ok = e.Pulls[i], true
			}
		}
		if !ok || math.IsNaN(p) {
			continue
		}
		x0, x1 := f.px(e.Lo[g.first]), f.px(e.Hi[g.last])
		c, side := f.clampY(p)
		y := f.py(c)
		top, h := math.Min(y, f.py(0)), math.Abs(y-f.py(0))
		col := colorBar
		if limit > 0 && math.Abs(p) > limit {
			col = colorOut
		}
		gap := 0.5
		if k > 1 || x1-x0 < 3 {
			gap = 0
		}
		w.nums(`<rect x="%" y="%" width="%" height="%" fill="`, x0+gap, top, math.Max(x1-x0-2*gap, 0.4), h).s(col).s(`"/>` + "\n")
		if side != 0 {
			over = append(over, p)
			overflowMark(w, f, (x0+x1)/2, side)
		}
	}
	if len(over) > 0 {
		worst := slices.MaxFunc(over, func(x, y float64) int {
			return cmpFloat(math.Abs(x), math.Abs(y))
		})
		w.s(`<text class="overflow-note" x="`).g(f.w - f.right).s(`" y="`).g(f.top - 10).s(`" text-anchor="end">`).d(len(over)).
			s(" beyond ±").s(num(m)).s(" (largest ").s(num(worst)).s(") ▲▼</text>\n")
	}
	w.s("</svg>\n")
}

func cmpFloat(x, y float64) int {
	switch {
	case x < y:
		return -1
	case x > y:
		return 1
	}
	return 0
}

// histSVG draws the distribution of the pulls (bins with zero combined
// uncertainty left out) in steps of 0.5 over ±R, R = 5 widened up to 8 for
// the largest pull, with the expected counts n·0.5·φ(x) of the unit
// normal. Pulls beyond ±R are counted in hatched overflow bars outside the
// axis. With logY the counts are on a log axis. used are the pulls of
// the bins with a combined uncertainty ([pullsUsed]).
func histSVG(w *page, id string, e Entry, used []float64, logY bool) {
	R := 5.0
	for _, p := range used {
		if a := math.Abs(p); a > R && !math.IsInf(a, 0) {
			R = math.Min(8, math.Ceil(a))
		}
	}
	const width = 0.5
	nb := int(2 * R / width)
	counts := make([]float64, nb)
	var under, over float64
	for _, p := range used {
		switch {
		case math.IsNaN(p):
		case p < -R:
			under++
		case p >= R:
			over++
		default:
			counts[min(nb-1, int((p+R)/width))]++
		}
	}
	n := float64(len(used))
	top := n * width / math.Sqrt(2*math.Pi)
	for _, c := range append(slices.Clone(counts), under, over) {
		top = math.Max(top, c)
	}
	x0, x1 := -R, R
	if under > 0 {
		x0 = -R - 2
	}
	if over > 0 {
		x1 = R + 2
	}
	f := &frame{w: figW, h: 320, left: figLeft, right: figRight, top: 44, bottom: 62, x0: x0, x1: x1, y0: 0, y1: math.Max(top*1.15, 1), xTicks: &[2]float64{-R, R}}
	class, label := "hist", "pull distribution"
	if logY {
		f.logY, f.y0, f.y1 = true, 0.5, math.Pow(10, math.Ceil(math.Log10(math.Max(top, 1)*3)))
		class, label = "hist hist-log", "pull distribution (log scale)"
	}
	f.open(w, class, label, "pull distribution against N(0, 1)", "pull", "bins")
	w.s(`<text x="`).g(f.w - f.right).s(`" y="`).g(f.top - 10).s(`" text-anchor="end"><tspan fill="` + colorBar + `">▮ pulls (`).d(len(used)).
		s(` bins)</tspan><tspan dx="18" fill="` + colorOut + `">— expected for N(0, 1)</tspan></text>` + "\n")
	bar := func(lo, hi, c float64, fill, class string) {
		if c <= 0 {
			return
		}
		w.s(`<rect class="`).s(class).nums(`" x="%" y="%" width="%" height="%" fill="`, f.px(lo), f.py(c), f.px(hi)-f.px(lo), f.py(f.y0)-f.py(c)).
			s(fill).s(`" stroke="` + colorAxis + `"/>` + "\n")
	}
	for k, c := range counts {
		bar(-R+float64(k)*width, -R+float64(k+1)*width, c, "#b9c0d0", "bin")
	}
	if under > 0 || over > 0 {
		w.s(`<defs><pattern id="hatch-`).s(id).s(`" width="8" height="8" patternUnits="userSpaceOnUse" patternTransform="rotate(45)"><rect width="8" height="8" fill="#fff"/><line x1="0" y1="0" x2="0" y2="8" stroke="` + colorOut + `" stroke-width="3"/></pattern></defs>` + "\n")
	}
	for _, o := range []struct {
		c, lo, hi  float64
		text       string
		at, anchor float64
	}{{under, -R - 1.75, -R - 0.25, "< −" + num(R), -R - 1, 0}, {over, R + 0.25, R + 1.75, "> " + num(R), R + 1, 0}} {
		if o.c == 0 {
			continue
		}
		bar(o.lo, o.hi, o.c, "url(#hatch-"+id+")", "overflow")
		w.nums(`<text class="overflow-note" x="%" y="%" text-anchor="middle" font-size="`, f.px(o.at), f.py(o.c)-8).g(tickFont).s(`">`).e(o.text).s(": ").s(num(o.c)).s("</text>\n")
	}
	w.s(`<polyline points="`)
	c := w.normalCurve(f, R)
	sep := false
	for i, g := range c.gauss {
		y := n * width * g / math.Sqrt(2*math.Pi)
		if logY && y < f.y0 {
			continue
		}
		if sep {
			w.b = append(w.b, ' ')
		}
		sep = true
		w.s(c.px[i]).s(",").f1(f.py(y))
	}
	w.s(`" fill="none" stroke="` + colorOut + `" stroke-width="2"/>` + "\n")
	w.s("</svg>\n")
}

// curve is the normal curve of a pull histogram over ±R: exp(−x²/2) at
// x = −R, −R + 0.05, … up to R, and each x as a coordinate of the figure.
// Pages of many comparisons draw it over a handful of axes, so
// [page.normalCurve] computes it once for each.
type curve struct {
	gauss []float64
	px    []string
}

type curveKey struct{ r, x0, x1 float64 }

// normalCurve returns the curve over ±R for the histogram frame f; of a
// histogram's frame only the x range varies.
func (w *page) normalCurve(f *frame, R float64) *curve {
	key := curveKey{R, f.x0, f.x1}
	if c, ok := w.curves[key]; ok {
		return c
	}
	c := &curve{}
	var buf []byte
	for x := -R; x <= R+1e-9; x += 0.05 {
		c.gauss = append(c.gauss, math.Exp(-x*x/2))
		buf = appendF1(buf[:0], f.px(x))
		c.px = append(c.px, string(buf))
	}
	if w.curves == nil {
		w.curves = map[curveKey]*curve{}
	}
	w.curves[key] = c
	return c
}

// pullsUsed returns the pulls of the bins that carry one (none without
// uncertainties, when every pull is NaN).
func pullsUsed(e Entry) []float64 {
	if e.NDF == 0 {
		return nil
	}
	if len(e.ZeroSigma) == 0 {
		return e.Pulls
	}
	zero := map[int]bool{}
	for _, z := range e.ZeroSigma {
		zero[z] = true
	}
	var out []float64
	for i, p := range e.Pulls {
		if !zero[i] {
			out = append(out, p)
		}
	}
	return out
}
