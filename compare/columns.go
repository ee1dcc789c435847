package compare

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"tandem/compare/table"
)

// Columns compares the selected columns of two tables, after checking that
// their bins agree within opt.EdgeTol (relative; [Defaults] gives 1e-9).
// Each uncertainty column of a selection is an error source with its own
// correlation (see [Options]); an asymmetric pair VALUE_err_minus /
// VALUE_err_plus is one source, named VALUE_err. The results are adjusted
// together as one family at opt.Alpha ([AdjustFamily]).
func Columns(a, b *table.Table, sels []Selection, opt Options) ([]*Result, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	if err := table.SameEdges(a, b, opt.EdgeTol); err != nil {
		return nil, err
	}
	if len(sels) == 0 {
		return nil, fmt.Errorf("%s: no value columns to compare", a.Source)
	}
	e := opt.effective()
	matched := map[string]bool{}
	out := make([]*Result, 0, len(sels))
	for _, sel := range sels {
		if e.Counts {
			r, err := countsColumn(a, b, sel, &opt)
			if err != nil {
				return nil, err
			}
			markCells(r, a)
			out = append(out, r)
			continue
		}
		s, err := buildSides(a, b, sel, &e, matched)
		if err != nil {
			return nil, err
		}
		r, err := compareSides(s, &opt)
		var nu *NoUncertaintyError
		switch {
		case errors.As(err, &nu):
			return nil, err
		case err != nil:
			return nil, fmt.Errorf("column %q: %w", sel.Value, err)
		}
		if countsLikePair(a, b, sel) {
			r.Warnings = append(r.Warnings, CountsLikeWarning)
		}
		markCells(r, a)
		out = append(out, r)
	}
	if err := unusedCorrelations(e, matched, sels); err != nil {
		return nil, err
	}
	if err := AdjustFamily(out, e.Alpha); err != nil {
		return nil, err
	}
	return out, nil
}

func sourceNames(sels []Selection) []string {
	var out []string
	for _, sel := range sels {
		out = append(out, sel.Errors...)
		for _, m := range sel.Minus {
			out = append(out, strings.TrimSuffix(m, "_minus"))
		}
	}
	return out
}

func quoteList(xs []string) string {
	q := make([]string, len(xs))
	for i, x := range xs {
		q[i] = fmt.Sprintf("%q", x)
	}
	if len(q) == 0 {
		return "none"
	}
	return strings.Join(q, ", ")
}

// buildSides reads one selection of both tables into error sources with
// their correlations. matched collects the Correlations keys used.
func buildSides(a, b *table.Table, sel Selection, e *Options, matched map[string]bool) (*sides, error) {
	for _, t := range []*table.Table{a, b} {
		if err := checkSelection(t, sel); err != nil {
			return nil, err
		}
	}
	s := &sides{column: sel.Value, labelA: a.Source, labelB: b.Source, lo: a.Lo, hi: a.Hi, a: a.Column(sel.Value), b: b.Column(sel.Value)}
	for k := range sel.Minus {
		s.asym = s.asym || !slices.Equal(a.Column(sel.Minus[k]), a.Column(sel.Plus[k])) || !slices.Equal(b.Column(sel.Minus[k]), b.Column(sel.Plus[k]))
	}
	for _, name := range sel.Errors {
		ca, cb := a.Column(name), b.Column(name)
		s.src = append(s.src, errSource{name: name, downA: ca, upA: ca, downB: cb, upB: cb})
	}
	for k := range sel.Minus {
		s.src = append(s.src, errSource{name: strings.TrimSuffix(sel.Minus[k], "_minus"),
			downA: a.Column(sel.Minus[k]), upA: a.Column(sel.Plus[k]),
			downB: b.Column(sel.Minus[k]), upB: b.Column(sel.Plus[k])})
	}
	overlapUsed := false
	for k := range s.src {
		src := &s.src[k]
		key, rho, ok := lookup(e.Correlations, src.name, sel.Value)
		switch {
		case ok:
			matched[key] = true
		case e.Overlap.Enabled() && matchesSource(src.name, sel.Value, e.overlapSource()):
			bins, err := overlapRho(a, b, e.Overlap)
			if err != nil {
				return nil, err
			}
			src.rhoBins, src.perBin, src.declared = bins, fmt.Sprintf("overlap %s/√(N_A N_B) from %q", e.Overlap.Common, e.Overlap.Count), true
			overlapUsed = true
			continue
		default:
			rho = e.Default
		}
		src.declared = rho.Set
		if rho.Column == "" {
			src.rho = rho.Value
			continue
		}
		bins, err := rhoColumn(a, b, rho.Column)
		if err != nil {
			return nil, err
		}
		src.rhoBins, src.perBin = bins, "column "+rho.Column
	}
	if e.Overlap.Enabled() && !overlapUsed && len(s.src) > 0 {
		return nil, fmt.Errorf("column %q: the event overlap sets the correlation of error source %q, which it does not have (sources: %s)",
			sel.Value, e.overlapSource(), quoteList(sourceNames([]Selection{sel})))
	}
	return s, nil
}

// checkSelection checks that the columns of sel exist in t and that no
// uncertainty is negative.
func checkSelection(t *table.Table, sel Selection) error {
	if t.Column(sel.Value) == nil {
		return table.Errorf(t.Source, 0, 0, "no value column %q (columns: %s)", sel.Value, strings.Join(t.Names, ", "))
	}
	if len(sel.Minus) != len(sel.Plus) {
		return fmt.Errorf("internal error: %d minus and %d plus error columns", len(sel.Minus), len(sel.Plus))
	}
	for _, name := range slices.Concat(sel.Errors, sel.Minus, sel.Plus) {
		c := t.Column(name)
		if c == nil {
			return table.Errorf(t.Source, 0, 0, "no uncertainty column %q (columns: %s)", name, strings.Join(t.Names, ", "))
		}
		for i, e := range c {
			if e < 0 {
				return table.Errorf(t.Source, binLine(t, i), 0, "bin %d: uncertainty %q is negative (%s)", i+1, name, table.Format(e))
			}
		}
	}
	return nil
}

// matchesSource reports whether error column name is source key of value
// column value: the same name, or VALUE_key.
func matchesSource(name, value, key string) bool {
	return name == key || name == value+"_"+key
}

// lookup finds the declared correlation of error column name.
func lookup(m map[string]Rho, name, value string) (string, Rho, bool) {
	if r, ok := m[name]; ok {
		return name, r, true
	}
	if suf, ok := strings.CutPrefix(name, value+"_"); ok {
		if r, ok := m[suf]; ok {
			return suf, r, true
		}
	}
	return "", Rho{}, false
}

// binLine is the source line of bin i of t, or 0.
func binLine(t *table.Table, i int) int {
	if i < len(t.Lines) {
		return int(t.Lines[i])
	}
	if t.Lines == nil && t.FirstLine > 0 {
		return t.FirstLine + i
	}
	return 0
}

// column finds a per-bin column in a, else in b.
func column(a, b *table.Table, name string) (*table.Table, []float64, error) {
	if c := a.Column(name); c != nil {
		return a, c, nil
	}
	if c := b.Column(name); c != nil {
		return b, c, nil
	}
	return nil, nil, table.Errorf(a.Source, 0, 0, "no column %q in %s or %s (columns: %s)", name, a.Source, b.Source, strings.Join(a.Names, ", "))
}

// rhoColumn reads a per-bin correlation column, checking its range.
func rhoColumn(a, b *table.Table, name string) ([]float64, error) {
	t, c, err := column(a, b, name)
	if err != nil {
		return nil, err
	}
	for i, v := range c {
		if !(v >= -1 && v <= 1) {
			return nil, table.Errorf(t.Source, binLine(t, i), 0, "bin %d: correlation %q is %s, outside [-1, 1]", i+1, name, table.Format(v))
		}
	}
	return c, nil
}

// overlapRho derives ρ_i = N_common,i / √(N_A,i N_B,i).
func overlapRho(a, b *table.Table, o Overlap) ([]float64, error) {
	na, nb := a.Column(o.Count), b.Column(o.Count)
	for _, x := range []struct {
		t *table.Table
		c []float64
	}{{a, na}, {b, nb}} {
		if x.c == nil {
			return nil, table.Errorf(x.t.Source, 0, 0, "no event-count column %q (columns: %s)", o.Count, strings.Join(x.t.Names, ", "))
		}
	}
	tc, nc, err := column(a, b, o.Common)
	if err != nil {
		return nil, err
	}
	out := make([]float64, len(na))
	for i := range out {
		for _, x := range []struct {
			t    *table.Table
			name string
			v    float64
		}{{a, o.Count, na[i]}, {b, o.Count, nb[i]}, {tc, o.Common, nc[i]}} {
			if x.v < 0 {
				return nil, table.Errorf(x.t.Source, binLine(x.t, i), 0, "bin %d: event count %q is negative (%s)", i+1, x.name, table.Format(x.v))
			}
		}
		if nc[i] > math.Min(na[i], nb[i]) {
			return nil, table.Errorf(tc.Source, binLine(tc, i), 0, "bin %d: %s common events, more than either chain selects (%s and %s)",
				i+1, table.Format(nc[i]), table.Format(na[i]), table.Format(nb[i]))
		}
		if na[i] > 0 && nb[i] > 0 {
			// √N_A·√N_B rather than √(N_A N_B): no overflow
			out[i] = math.Min(1, nc[i]/(math.Sqrt(na[i])*math.Sqrt(nb[i])))
		}
	}
	return out, nil
}

// unusedCorrelations refuses a correlation declared for a source that no
// compared column has (a misspelt name would otherwise be ignored).
func unusedCorrelations(e Options, matched map[string]bool, sels []Selection) error {
	var unknown []string
	for k := range e.Correlations {
		if !matched[k] {
			unknown = append(unknown, k)
		}
	}
	if len(unknown) == 0 {
		return nil
	}
	slices.Sort(unknown)
	return fmt.Errorf("correlation declared for %s, which is no error source of the compared columns (sources: %s)",
		quoteList(unknown), quoteList(sourceNames(sels)))
}
