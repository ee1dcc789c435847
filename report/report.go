// Package report renders comparison summaries for people and machines:
// plain text for terminals, JSON for scripts, Markdown for meeting pages,
// JUnit XML for CI systems and self-contained HTML with figures for review
// meetings. Renderers write to an io.Writer and never touch files; the
// command line writes their output atomically.
package report

import (
	"container/heap"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"tandem/compare"
)

// Formats lists the output formats by name, in the order `report` writes them.
var Formats = []string{"text", "json", "markdown", "junit", "html"}

// Extension returns the file-name extension of a format.
func Extension(format string) string {
	switch format {
	case "markdown":
		return ".md"
	case "junit":
		return ".junit.xml"
	case "text":
		return ".txt"
	}
	return "." + format
}

// Style controls human output.
type Style struct {
	// Color enables ANSI colour in text output.
	Color bool
	// Stamp, when set, is written into the report: the tool, the time
	// and the digest of each input. Every report tandem writes has one;
	// tests leave it out or fix it.
	Stamp *Stamp
	// MaxRows limits the per-bin rows of text and Markdown tables; beyond it
	// the worst bins by |pull| are shown. 0 means 200.
	MaxRows int
}

// Render writes s in the named format. Free text (names, labels, files,
// reasons) is shown with its control characters and bidirectional
// overrides escaped (\x1b, \u202e), in every format.
func Render(w io.Writer, format string, s *Summary, st Style) error {
	if format != "json" {
		s = cleanSummary(s)
		st.Stamp = cleanStamp(st.Stamp)
	}
	switch format {
	case "text", "":
		return Text(w, s, st)
	case "json":
		return JSON(w, s, st)
	case "markdown":
		return Markdown(w, s, st)
	case "junit":
		return JUnit(w, s, st)
	case "html":
		return HTML(w, s, st)
	}
	return fmt.Errorf("unknown format %q (want text, json, markdown, junit or html)", format)
}

// num formats a statistic for people: four significant digits.
func num(v float64) string {
	switch {
	case math.IsNaN(v):
		return "n/a"
	case v == 0:
		return "0"
	case math.Abs(v) < 1e-4 || math.Abs(v) >= 1e6:
		return strconv.FormatFloat(v, 'e', 3, 64)
	}
	return string(noNegZero(strconv.AppendFloat(nil, v, 'g', 4, 64), 0))
}

// pval formats a p-value: four decimals, or three significant digits
// below 0.01; n/a when it is undefined (NaN).
func pval(p float64) string {
	if math.IsNaN(p) {
		return "n/a"
	}
	if p < 1e-2 && p > 0 {
		return strconv.FormatFloat(p, 'e', 2, 64)
	}
	return fixed(p, 4)
}

// fixed formats v with the given number of decimals, as
// strconv.FormatFloat(v, 'f', places, 64) does.
func fixed(v float64, places int) string {
	var a [32]byte
	return string(noNegZero(appendFixed(a[:0], v, places), 0))
}

// val formats a table value exactly enough to read: six significant digits.
func val(v float64) string {
	var a [32]byte
	return string(noNegZero(appendG6(a[:0], v), 0))
}

// rows picks the bins a human table shows: all of them up to the limit,
// else the worst by |pull| in bin order, and whether rows were left out.
func rows(r *compare.Result, st Style) ([]int, bool) {
	limit := st.MaxRows
	if limit <= 0 {
		limit = 200
	}
	idx := make([]int, r.Bins)
	for i := range idx {
		idx[i] = i
	}
	if r.Bins <= limit {
		return idx, false
	}
	// keep the worst |pull| in a min-heap of size limit: O(n log limit)
	h := &pullHeap{pulls: r.Pulls}
	for _, i := range idx {
		if h.Len() < limit {
			heap.Push(h, i)
		} else if absPull(r.Pulls[i]) > absPull(r.Pulls[h.idx[0]]) {
			h.idx[0] = i
			heap.Fix(h, 0)
		}
	}
	worst := h.idx
	slices.Sort(worst)
	return worst, true
}

// pullHeap is a min-heap of bin indices ordered by |pull|.
type pullHeap struct {
	pulls []float64
	idx   []int
}

func (h *pullHeap) Len() int { return len(h.idx) }
func (h *pullHeap) Less(i, j int) bool {
	return absPull(h.pulls[h.idx[i]]) < absPull(h.pulls[h.idx[j]])
}

// absPull is |p|, with an undefined pull (NaN) below every other.
func absPull(p float64) float64 {
	if math.IsNaN(p) {
		return -1
	}
	return math.Abs(p)
}
func (h *pullHeap) Swap(i, j int) { h.idx[i], h.idx[j] = h.idx[j], h.idx[i] }
func (h *pullHeap) Push(x any)    { h.idx = append(h.idx, x.(int)) }
func (h *pullHeap) Pop() any {
	x := h.idx[len(h.idx)-1]
	h.idx = h.idx[:len(h.idx)-1]
	return x
}

// criterionLine is a criterion in words, e.g. "chi2 p-value 0.31 >= 0.01".
func criterionLine(c compare.Criterion) string {
	name, v, adj, lim := critCells(c)
	if adj != "" {
		return name + " = " + v + " (adjusted " + adj + ", limit " + lim + ")"
	}
	return name + " = " + v + " (limit " + lim + ")"
}

// critCells formats one criterion for a table: name, raw value, the
// family-wise adjusted p-value ("" for criteria that are not p-values), the
// limit with its comparison, and whether it passed.
func critCells(c compare.Criterion) (name, value, adjusted, limit string) {
	name = c.Name
	if c.Note != "" {
		name += " (" + c.Note + ")"
	}
	value = num(c.Value)
	if c.Kind == compare.KindPValue {
		value = pval(c.Value)
	}
	if c.Adjusted != nil {
		adjusted = pval(*c.Adjusted)
	}
	return name, value, adjusted, c.Op + " " + num(c.Limit)
}

// sourcesLine lists the error sources with their correlation and share of
// σ_d², e.g. "stat ρ = 0.6 (71 % of σ_d²), syst ρ = 1 (0 %)".
func sourcesLine(e Entry) string {
	var parts []string
	for _, s := range e.Sources {
		rho := num(s.Rho)
		switch {
		case s.PerBin != "":
			rho = "mean " + rho + " per bin from " + s.PerBin
		case !s.Declared:
			rho += " (not declared)"
		}
		share := "share of σ_d² n/a"
		if !math.IsNaN(s.Share) {
			share = strconv.FormatFloat(100*s.Share, 'f', 0, 64) + "% of σ_d²"
		}
		parts = append(parts, s.Name+" ρ = "+rho+", "+share)
	}
	if len(parts) == 0 {
		return ""
	}
	return "error sources: " + strings.Join(parts, "; ")
}

// pullLimit is the largest allowed |pull| of e, 0 when there is none.
func pullLimit(e Entry) float64 {
	for _, c := range e.Criteria {
		if c.Name == compare.CritMaxPull {
			return c.Limit
		}
	}
	return 0
}

// shapeLine describes the pull distribution in one sentence, with n/a for
// what is undefined (a width needs two pulls).
func shapeLine(e Entry) string {
	if identical(e) {
		return "pulls: all 0, the tables are identical bin for bin (two independent chains do not give this); χ²/ndf = " + chi2NDF(e)
	}
	n := len(pullsUsed(e))
	b := make([]byte, 0, 160)
	b = append(b, "pulls: mean "...)
	switch {
	case n >= 2:
		b = append(append(append(b, num(e.PullMean)...), " ± "...), num(e.PullMeanErr)...)
		b = append(append(append(append(b, ", width "...), num(e.PullWidth)...), " ± "...), num(e.PullWidthEr)...)
	case n == 1:
		b = append(append(b, num(e.PullMean)...), ", width n/a"...)
	default:
		b = append(b, "n/a, width n/a"...)
	}
	b = append(append(append(append(append(b, "; KS D = "...), num(e.KSStat)...), " (p = "...), pval(e.KSP)...), "); "...)
	if e.Runs == 1 {
		b = append(b, "1 run"...)
	} else {
		b = append(strconv.AppendInt(b, int64(e.Runs), 10), " runs"...)
	}
	b = append(append(append(append(b, " (p = "...), pval(e.RunsP)...), "); χ²/ndf = "...), chi2NDF(e)...)
	return string(b)
}

// identical reports whether both sides hold the same value in every bin.
func identical(e Entry) bool {
	if e.Result == nil || e.NDF == 0 || len(e.A) != len(e.B) {
		return false
	}
	for i := range e.A {
		if e.A[i] != e.B[i] {
			return false
		}
	}
	return true
}

// chi2NDF writes χ²/ndf as "12.3/10", or "n/a (ndf 0)" when no bin
// carries a pull.
func chi2NDF(e Entry) string {
	if e.NDF == 0 || math.IsNaN(e.Chi2) {
		return "n/a (ndf " + strconv.Itoa(e.NDF) + ")"
	}
	return num(e.Chi2) + "/" + strconv.Itoa(e.NDF)
}

// filesShown says whether a report names the input files beside the
// sides' names: when they are known and differ from the names.
func filesShown(e Entry) bool {
	a, b := e.Sides()
	return (e.Files[0] != "" || e.Files[1] != "") && (a != e.Files[0] || b != e.Files[1])
}

// binCells formats one row of a per-bin table: bin number, edges, each
// side's value and uncertainty, the difference, its uncertainty and the
// pull, appended to dst. Each value is rounded where its uncertainty has
// its second significant digit.
func binCells(dst []string, e Entry, i int) []string {
	va, ea := withError(e.A[i], e.ErrA[i])
	vb, eb := withError(e.B[i], e.ErrB[i])
	d, sd := withError(e.Diff[i], e.SigmaDiff[i])
	p := pullText(e.Pulls[i]) // n/a when undefined, ±Inf when infinite
	dst = appendYEdges(append(dst, strconv.Itoa(i+1), val(e.Lo[i]), val(e.Hi[i])), e, i)
	return append(dst, va, ea, vb, eb, d, sd, p)
}

// binRow appends the cells of [binCells] for bin i, each between pre and
// post, without making strings of them. The cells are numbers (or n/a),
// which need no escaping in HTML or Markdown.
func binRow(p *page, e Entry, i int, pre, post string) {
	p.s(pre).d(i + 1).s(post).s(pre)
	p.b = noNegZero(appendG6(p.b, e.Lo[i]), len(p.b))
	p.s(post).s(pre)
	p.b = noNegZero(appendG6(p.b, e.Hi[i]), len(p.b))
	p.s(post)
	yEdgesRow(p, e, i, pre, post)
	for _, ve := range [3][2]float64{{e.A[i], e.ErrA[i]}, {e.B[i], e.ErrB[i]}, {e.Diff[i], e.SigmaDiff[i]}} {
		var k int
		p.scratch, k = appendWithError(p.scratch[:0], ve[0], ve[1])
		p.s(pre)
		p.b = append(p.b, p.scratch[:k]...)
		p.s(post).s(pre)
		p.b = append(p.b, p.scratch[k:]...)
		p.s(post)
	}
	p.s(pre)
	if pl := e.Pulls[i]; math.Abs(pl) < 1000 {
		p.b = noNegZero(appendFixed(p.b, pl, 2), len(p.b))
	} else {
		p.s(num(pl))
	}
	p.s(post)
}

// pullText writes a pull with two decimals, so that a column of pulls
// lines up on the decimal point; huge ones keep four significant digits.
func pullText(p float64) string {
	if math.Abs(p) < 1000 {
		return fixed(p, 2)
	}
	return num(p)
}

// withError formats a value and its uncertainty to the same decimal place,
// the uncertainty to two significant digits (common practice; the PDG's
// rounding rule keeps one or two). Values of everyday size are written as
// decimals, others in exponent form. Without a positive uncertainty the
// value keeps six significant digits.
func withError(v, e float64) (string, string) {
	var a [64]byte
	b, k := appendWithError(a[:0], v, e)
	return string(b[:k]), string(b[k:])
}

// appendWithError appends the value and the uncertainty of [withError]
// one after the other, and returns where the uncertainty starts.
func appendWithError(b []byte, v, e float64) ([]byte, int) {
	start := len(b)
	b, k := appendWithError1(b, v, e)
	if negZero(b[start:k]) { // the value rounds to zero
		b = append(b[:start], b[start+1:]...)
		k--
	}
	return b, k
}

func appendWithError1(b []byte, v, e float64) ([]byte, int) {
	if !(e > 0) || math.IsInf(e, 0) || math.IsNaN(v) || math.IsInf(v, 0) {
		b = appendG6(b, v)
		k := len(b)
		return appendG6(b, e), k
	}
	last := decade(e) - 1 // decimal exponent of the second digit
	big := math.Max(math.Abs(v), e)
	if big < 1e6 && e >= 1e-4 {
		places := max(0, -last)
		if last > 0 {
			q := math.Pow(10, float64(last))
			v, e = math.Round(v/q)*q, math.Round(e/q)*q
		}
		b = appendFixed(b, v, places)
		k := len(b)
		return appendFixed(b, e, places), k
	}
	ve := last + 1
	if v != 0 {
		ve = int(math.Floor(math.Log10(math.Abs(v))))
	}
	b = strconv.AppendFloat(b, v, 'e', max(1, ve-last), 64)
	k := len(b)
	return strconv.AppendFloat(b, e, 'e', 1, 64), k
}

// decades are the powers of ten decade finds x between.
var decades = [...]float64{1e-5, 1e-4, 1e-3, 1e-2, 1e-1, 1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7}

// decade is int(math.Floor(math.Log10(x))) for x > 0, as withError has
// always computed it (math.Log10 is off by an ulp at some powers of ten,
// e.g. it gives 2.9999999999999996 for 1000, and the reports keep what it
// gives). Between 10⁻⁵ and 10⁷ and away from the powers of ten it finds
// the decade by comparison, which cannot differ there.
func decade(x float64) int {
	for k := 1; k < len(decades); k++ {
		if x < decades[k] {
			lo, hi := decades[k-1], decades[k]
			if x < lo*(1+1e-12) || x > hi*(1-1e-12) {
				break
			}
			return k - 1 - 5
		}
	}
	return int(math.Floor(math.Log10(x)))
}

func entryTitle(e Entry) string {
	t := e.Observable
	if e.Column != "" && e.Column != e.Observable {
		t += " / " + e.Column
	}
	if e.Teams[0] != "" {
		t += fmt.Sprintf(" (%s vs %s)", e.Teams[0], e.Teams[1])
	}
	return t
}

// count writes n with the noun in the right number: "1 comparison",
// "2 comparisons".
func count(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return strconv.Itoa(n) + " " + many
}

// headline is the overall verdict of s (one of compare.Verdict*) and a
// sentence of what it rests on, the same in every format.
func headline(s *Summary) (verdict, why string) {
	verdict = s.Verdict()
	n, k := comparisons(s), s.Failures()
	made := func() string {
		if n == 0 {
			return "no comparison made"
		}
		return count(n, "comparison", "comparisons") + " made, " + strconv.Itoa(k) + " failing"
	}
	switch verdict {
	case compare.VerdictPass:
		switch n {
		case 0:
			why = "no comparison to make"
		case 1:
			why = "the 1 comparison passes"
		default:
			why = "all " + strconv.Itoa(n) + " comparisons pass"
		}
	case compare.VerdictFail:
		why = strconv.Itoa(k) + " of " + strconv.Itoa(n) + " comparisons fail"
		if n == 1 {
			why = "the 1 comparison fails"
		}
	case VerdictIncomplete, VerdictPending:
		var names []string
		for _, m := range s.Missing {
			names = append(names, m.Observable)
		}
		why = "comparisons of " + count(len(names), "observable", "observables") + " missing: " + strings.Join(names, ", ") + "; " + made()
	case VerdictStale:
		why = made() + ", but " + count(len(s.Stale), "sign-off is", "sign-offs are") + " stale"
	}
	return verdict, why
}

// Headline is the overall verdict of s and a sentence of what it rests
// on, as the reports write them.
func Headline(s *Summary) (verdict, why string) { return headline(cleanSummary(s)) }

// missingLine is a missing comparison in words.
func missingLine(m Missing) string {
	return m.Observable + ": " + m.Verdict + ", " + m.Reason
}

// warnings lists every warning of every comparison, each after the
// comparison's title, for the top of a report.
func warnings(s *Summary) []string {
	var out []string
	for _, e := range s.Entries {
		if e.Result == nil {
			continue
		}
		for _, w := range e.Warnings {
			if w == compare.PairwiseNote {
				continue // said once, at the head of the N-team section
			}
			out = append(out, entryTitle(e)+": "+w)
		}
	}
	return out
}

// Warnings lists every warning of s, each after its comparison's title,
// as the reports show them on top; cmd/tandem prints them on stderr.
func Warnings(s *Summary) []string { return warnings(cleanSummary(s)) }

// verdictOf is compare.VerdictPass or compare.VerdictFail.
func verdictOf(pass bool) string {
	if pass {
		return compare.VerdictPass
	}
	return compare.VerdictFail
}
