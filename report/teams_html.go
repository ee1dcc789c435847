package report

import (
	"math"
	"strconv"

	"tandem/compare"
)

// teamColors tell the teams apart in the N-team figures; the first two are
// the pairwise figures' colours. Beyond eight teams colours repeat and the
// marker shape (teamShapes) still differs.
var teamColors = [...]string{colorA, colorB, "#17705e", "#9c2c6f", "#3d6db3", "#6b4c1e", "#4f7d12", "#505050"}

// teamShapes: circle, square, triangle, diamond.
const teamShapes = 4

// teamsHTML writes the N-team section of the HTML page: for each compared
// column its verdict, the departing team, one overlay of every team's
// values with their combination, every team's leave-one-out pulls, the
// criteria and the leave-one-out table.
func teamsHTML(p *page, s *Summary) {
	if len(s.Teams) == 0 {
		return
	}
	p.s(`<h2 id="teams">N-team consistency</h2>` + "\n")
	p.s(`<p class="note">`).e(capitalize(strconv.Itoa(len(s.Teams[0].Teams)) + " teams: " + teamsIntro)).s(".</p>\n")
	for k, t := range s.Teams {
		id := "teams" + strconv.Itoa(k)
		p.s(`<h3 id="`).s(id).s(`">`).e(teamsTitle(t)).s(": ").s(verdictSpan(t.Pass)).s("</h3>\n")
		p.s("<p>")
		for i, team := range t.Teams {
			if i > 0 {
				p.s("; ")
			}
			p.s(`<span style="color:`).s(teamColors[i%len(teamColors)]).s(`">`).s(shapeGlyph(i)).s("</span> ").e(team)
			if i < len(t.Files) && t.Files[i] != team {
				p.s(": <code>").e(t.Files[i]).s("</code>")
			}
		}
		p.s("</p>\n")
		if t.Test == nil {
			p.s("<p>No N-team test: no bin where every team has an uncertainty.</p>\n")
		} else {
			p.s("<p>").e(capitalize(teamsChi2Line(t))).s("</p>\n")
			p.s("<p><b>").e(capitalize(departingLine(t))).s("</b></p>\n")
		}
		p.s(`<figure class="panels">` + "\n")
		teamsOverlaySVG(p, t)
		teamsPullsSVG(p, t)
		p.s("</figure>\n")
		if _, g := groups(len(t.Lo)); g > 1 {
			p.s(`<p class="note">`).d(len(t.Lo)).s(" bins are drawn as groups of ").d(g).s(" consecutive bins: values at their mean, pulls as their sum over √(bins in the group), N(0, 1) when the pulls are; the statistics and the JSON report use every bin.</p>\n")
		}
		if len(t.Criteria) > 0 {
			p.s("<table><tr><th>criterion</th><th>value</th><th>adjusted p</th><th>limit</th><th>result</th></tr>\n")
			for _, c := range t.Criteria {
				name, v, adj, lim := critCells(c)
				p.s("<tr><td>").e(name).s("</td><td>").s(v).s("</td><td>").s(adj).s("</td><td>").e(lim).s("</td><td>").s(verdictSpan(c.Pass)).s("</td></tr>\n")
			}
			p.s("</table>\n")
			p.s("<p>These p-values are adjusted together (Holm) over ").d(t.Family).s(" p-values, so that agreeing teams fail with probability at most α = ").s(num(t.Alpha)).s("; the pairwise p-values below are not in this family.</p>\n")
		}
		for _, c := range t.Criteria {
			if !c.Pass && c.Detail != "" {
				p.s(`<p class="note">`).e(c.Name).s(": ").e(c.Detail).s("</p>\n")
			}
		}
		if l := teamSourcesLine(t); l != "" {
			p.s("<p>").e(capitalize(l)).s("</p>\n")
		}
		for _, wn := range t.Warnings {
			p.s(`<p class="note warn">`).e(wn).s("</p>\n")
		}
		if t.Test == nil {
			continue
		}
		rows := looRows(t)
		p.s("<table><caption>Leave-one-out: each team against the combination of the others</caption><tr>")
		for _, h := range rows[0] {
			p.s("<th>").e(h).s("</th>")
		}
		p.s("</tr>\n")
		for _, r := range rows[1:] {
			p.s("<tr>")
			for _, c := range r {
				p.s("<td>").e(c).s("</td>")
			}
			p.s("</tr>\n")
		}
		p.s("</table>\n")
		p.maybeFlush()
	}
	p.s("<h2>Pairwise diagnostics</h2>\n")
}

func shapeGlyph(i int) string {
	return [...]string{"●", "■", "▲", "◆"}[i%teamShapes]
}

// teamX is the x position of team k of n within the bin [lo, hi]: the
// teams are spread across the bin so that their error bars do not hide
// one another.
func teamX(f *frame, lo, hi float64, k, n int) float64 {
	x0, x1 := f.px(lo), f.px(hi)
	return x0 + (x1-x0)*float64(k+1)/float64(n+1)
}

// marker draws team k's marker of radius r at (x, y).
func marker(p *page, k int, x, y, r float64) {
	c := teamColors[k%len(teamColors)]
	switch k % teamShapes {
	case 0:
		p.nums(`<circle cx="%" cy="%" r="%" fill="`+c+`"/>`, x, y, r)
	case 1:
		p.nums(`<rect x="%" y="%" width="%" height="%" fill="`+c+`"/>`, x-r, y-r, 2*r, 2*r)
	case 2:
		p.nums(`<path d="M%,% l%,% h% z" fill="`+c+`"/>`, x, y-r, r, 2*r, -2*r)
	default:
		p.nums(`<path d="M%,% l%,% l%,% l%,% z" fill="`+c+`"/>`, x, y-r, r, r, -r, r, -r, -r)
	}
}

// teamPoint is one drawn point: the mean of a group of bins (one bin
// when the figure is not decimated).
type teamPoint struct{ lo, hi, v, s float64 }

// teamPoints groups the values vs with errors es as drawn: each group at
// its mean, with the error of the mean; pulls (es nil) at their sum over
// √n, which is N(0, 1) when the pulls are.
func teamPoints(t *compare.TeamsResult, vs, es []float64) []teamPoint {
	gs, _ := groups(len(t.Lo))
	out := make([]teamPoint, 0, len(gs))
	for _, g := range gs {
		var sum, s2 float64
		n := 0
		for i := g.first; i <= g.last; i++ {
			if math.IsNaN(vs[i]) || math.IsInf(vs[i], 0) {
				continue
			}
			sum += vs[i]
			if es != nil {
				s2 += es[i] * es[i]
			}
			n++
		}
		pt := teamPoint{lo: t.Lo[g.first], hi: t.Hi[g.last], v: math.NaN()}
		switch {
		case n > 0 && es == nil:
			pt.v = sum / math.Sqrt(float64(n))
		case n > 0:
			pt.v, pt.s = sum/float64(n), math.Sqrt(s2)/float64(n)
		}
		out = append(out, pt)
	}
	return out
}

func teamsXFrame(t *compare.TeamsResult) (x0, x1 float64, logX bool) {
	x0, x1 = t.Lo[0], t.Hi[len(t.Hi)-1]
	if x1 <= x0 {
		x1 = x0 + 1
	}
	return x0, x1, x0 > 0 && x1/x0 > 100
}

// teamsOverlaySVG draws every team's values with their ±σ bars, offset
// within each bin, over the combination of all teams (a grey step with
// its ±σ band).
func teamsOverlaySVG(p *page, t *compare.TeamsResult) {
	n := len(t.Teams)
	f := &frame{w: figW, h: 380, left: figLeft, right: figRight, top: 44, bottom: 44}
	f.x0, f.x1, f.logX = teamsXFrame(t)
	pts := make([][]teamPoint, n)
	lo, hi := math.Inf(1), math.Inf(-1)
	for k := range n {
		pts[k] = teamPoints(t, t.Values[k], t.Sigma[k])
		for _, pt := range pts[k] {
			if !math.IsNaN(pt.v) {
				lo, hi = math.Min(lo, pt.v-pt.s), math.Max(hi, pt.v+pt.s)
			}
		}
	}
	if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		lo, hi = 0, 1
	}
	pad := 0.06 * (hi - lo)
	if pad == 0 {
		pad = math.Max(1, math.Abs(hi)*0.1)
	}
	f.y0, f.y1 = lo-pad, hi+pad
	f.open(p, "overlay", "values of all teams", "", "", t.Column)
	p.s(`<text x="`).g(f.left).s(`" y="`).g(f.top - 10).s(`">`)
	for k, team := range t.Teams {
		p.s(`<tspan dx="`).d(boolInt(k > 0) * 14).s(`" fill="`).s(teamColors[k%len(teamColors)]).s(`">`).s(shapeGlyph(k)).s(" ").e(shorten(team, 20)).s("</tspan>")
	}
	p.s(`<tspan dx="14" fill="#777">▭ combination ± σ</tspan></text>` + "\n")
	if t.Test != nil {
		comb := teamPoints(t, t.Test.Combined, t.Test.CombinedSigma)
		for _, pt := range comb {
			if math.IsNaN(pt.v) || math.IsNaN(pt.s) {
				continue
			}
			a, _ := f.clampY(pt.v - pt.s)
			b, _ := f.clampY(pt.v + pt.s)
			x0, x1 := f.px(pt.lo), f.px(pt.hi)
			p.nums(`<rect x="%" y="%" width="%" height="%" fill="#999" fill-opacity="0.25"/>`, x0, f.py(b), math.Max(x1-x0, 0.3), math.Max(f.py(a)-f.py(b), 0))
			y, _ := f.clampY(pt.v)
			p.nums(`<path d="M%,% H%" stroke="#777" stroke-width="1.5"/>`+"\n", x0, f.py(y), x1)
		}
	}
	binPx := (f.w - f.left - f.right) / float64(len(pts[0])*(n+1))
	r := math.Max(1.5, math.Min(4.5, binPx*0.45))
	for k := range n {
		c := teamColors[k%len(teamColors)]
		for _, pt := range pts[k] {
			if math.IsNaN(pt.v) {
				continue
			}
			x := teamX(f, pt.lo, pt.hi, k, n)
			a, _ := f.clampY(pt.v - pt.s)
			b, _ := f.clampY(pt.v + pt.s)
			p.nums(`<path d="M%,% V%" stroke="`+c+`" stroke-width="1.4"/>`, x, f.py(a), f.py(b))
			y, _ := f.clampY(pt.v)
			marker(p, k, x, f.py(y), r)
		}
		p.s("\n")
	}
	p.s("</svg>\n")
}

// teamsPullsSVG draws every team's leave-one-out pulls per bin, with the
// ±1 and ±3 lines.
func teamsPullsSVG(p *page, t *compare.TeamsResult) {
	if t.Test == nil {
		return
	}
	n := len(t.Teams)
	f := &frame{w: figW, h: 260, left: figLeft, right: figRight, top: 30, bottom: 44}
	f.x0, f.x1, f.logX = teamsXFrame(t)
	R := 3.5
	for _, d := range t.Test.LeaveOneOut {
		for _, v := range d.Pulls {
			if !math.IsInf(v, 0) && !math.IsNaN(v) {
				R = math.Max(R, math.Min(10, 1.1*math.Abs(v)))
			}
		}
	}
	f.y0, f.y1 = -R, R
	f.open(p, "pulls", "leave-one-out pulls of every team", "each team against the combination of the others", "", "pull")
	for _, y := range []float64{-3, -1, 0, 1, 3} {
		dash := ` stroke-dasharray="4 4"`
		if y == 0 {
			dash = ""
		}
		p.nums(`<path d="M%,% H%" stroke="`+colorAxis+`" stroke-width="0.8"`+dash+`/>`+"\n", f.left, f.py(y), f.w-f.right)
	}
	binPx := (f.w - f.left - f.right) / float64(len(t.Lo)*(n+1))
	r := math.Max(1.5, math.Min(4, binPx*0.45))
	for k, d := range t.Test.LeaveOneOut {
		for _, pt := range teamPoints(t, d.Pulls, nil) {
			if math.IsNaN(pt.v) {
				continue
			}
			y, _ := f.clampY(pt.v)
			marker(p, k, teamX(f, pt.lo, pt.hi, k, n), f.py(y), r)
		}
		p.s("\n")
	}
	p.s("</svg>\n")
}
