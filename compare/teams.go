package compare

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"tandem/compare/consistency"
	"tandem/compare/table"
)

// Criterion names of the N-team test. A team's leave-one-out criteria
// are named "TEAM: " followed by CritTeamLOO or CritTeamShift.
const (
	CritTeams     = "N-team chi2 p-value"
	CritTeamLOO   = "leave-one-out chi2 p-value"
	CritTeamShift = "leave-one-out shift p-value"
)

// PairwiseNote is the warning every pairwise comparison of three or more
// teams carries: its p-values are diagnostics, outside the α family.
const PairwiseNote = "diagnostic: with three or more teams the N-team test judges; this pair's p-values are shown but are not in the α family (its comparable-bins check and declared tolerances still count)"

// TeamSource is one error source of the N-team test with the correlation
// it has between any two different teams.
type TeamSource struct {
	Name     string
	Rho      float64
	Declared bool
}

// TeamsResult is the N-team consistency test of one compared column
// (see package consistency) with its criteria.
type TeamsResult struct {
	// Observable and Column name what was compared.
	Observable, Column string
	// Teams are the teams' labels and Files their tables, in input order.
	Teams, Files []string
	// Lo and Hi are the common bin edges.
	Lo, Hi []float64
	// Values are the teams' values, [team][bin]; Sigma their total
	// uncertainty (the sources in quadrature), for figures.
	Values, Sigma [][]float64
	Sources       []TeamSource
	// Test holds the statistics: χ², its per-bin terms, the combination
	// of all teams and every team's leave-one-out deviation.
	Test *consistency.Result
	// Departing is the team whose leave-one-out p-value (χ² or shift) is
	// the smallest; Departs lists the teams whose leave-one-out criteria
	// fail, the smallest p-value first (empty when none does). With few
	// teams, one departing team pulls the combination of the others, so
	// another team's leave-one-out test may fail beside it.
	Departing string
	Departs   []string
	// Criteria are the N-team χ² p-value, then for each team its
	// leave-one-out χ² and shift p-values, adjusted (Holm) in one family
	// with every other p-value criterion of the command.
	Criteria []Criterion
	Alpha    float64
	Family   int
	Warnings []string
	Pass     bool
}

// Verdict is "pass" or "fail".
func (r *TeamsResult) Verdict() string { return verdict(r.Pass) }

// Failures lists the failed criteria in words.
func (r *TeamsResult) Failures() []string {
	return (&Result{Criteria: r.Criteria}).Failures()
}

// Pair is the pairwise comparison of teams I and J (I < J) of one column:
// a diagnostic beside the N-team test (see [PairwiseNote]).
type Pair struct {
	Observable string
	I, J       int
	*Result
}

// TeamsComparison is the comparison of three or more tables.
type TeamsComparison struct {
	Results []*TeamsResult
	Pairs   []Pair
}

// Teams compares the selected columns of three or more tables, labelled
// labels: per column, the N-team consistency test (package consistency)
// with the error sources of the selection and their correlations between
// teams (opt.Correlations, opt.Default; numbers only), and every pair of
// tables as a diagnostic. The family that holds the false-alarm rate at
// opt.Alpha (Holm, [AdjustFamily]) is the N-team χ² and each team's
// leave-one-out χ² and shift p-values of every column; the pairwise
// p-values are computed and shown but are outside it. The pairs' other
// criteria (every bin comparable, declared tolerances) count.
//
// Settings that describe two chains only are refused: covariance matrices,
// the subset rule, the event overlap, counts and per-bin correlation
// columns.
func Teams(tables []*table.Table, labels []string, name string, sels []Selection, opt Options) (*TeamsComparison, error) {
	if len(tables) < 3 {
		return nil, fmt.Errorf("the N-team test needs three or more tables, got %d", len(tables))
	}
	if len(labels) != len(tables) {
		return nil, fmt.Errorf("%d labels for %d tables", len(labels), len(tables))
	}
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	e := opt.effective()
	switch {
	case e.Counts:
		return nil, errors.New("counts are compared two tables at a time; three or more teams are compared as values with uncertainties")
	case opt.CovA != nil:
		return nil, errors.New("covariance matrices describe two tables; with three or more teams give error sources and their correlations between teams")
	case e.Subset:
		return nil, errors.New("the subset rule describes two tables; with three or more teams declare the correlation of each error source between teams")
	case e.Overlap.Enabled():
		return nil, errors.New("the event overlap describes two tables; with three or more teams declare the correlation of each error source between teams as a number")
	case e.Default.Column != "":
		return nil, fmt.Errorf("a per-bin correlation column (%q) is not supported with three or more teams; give the correlation as a number", e.Default.Column)
	}
	for k, r := range e.Correlations {
		if r.Column != "" {
			return nil, fmt.Errorf("error source %q: a per-bin correlation column (%q) is not supported with three or more teams; give the correlation as a number", k, r.Column)
		}
	}
	for _, t := range tables[1:] {
		if err := table.SameEdges(tables[0], t, opt.EdgeTol); err != nil {
			return nil, err
		}
	}
	if len(sels) == 0 {
		return nil, fmt.Errorf("%s: no value columns to compare", tables[0].Source)
	}
	out := &TeamsComparison{}
	matched := map[string]bool{}
	var pairResults []*Result
	for _, sel := range sels {
		for _, t := range tables {
			if err := checkSelection(t, sel); err != nil {
				return nil, err
			}
		}
		for i := range tables {
			for j := i + 1; j < len(tables); j++ {
				s, err := buildSides(tables[i], tables[j], sel, &e, matched)
				if err != nil {
					return nil, err
				}
				r, err := compareSides(s, &opt)
				var nu *NoUncertaintyError
				switch {
				case errors.As(err, &nu):
					return nil, err
				case err != nil:
					return nil, fmt.Errorf("column %q, %s and %s: %w", sel.Value, labels[i], labels[j], err)
				}
				r.LabelA, r.LabelB = labels[i], labels[j]
				r.Criteria = slices.DeleteFunc(r.Criteria, func(c Criterion) bool { return c.Kind == KindPValue })
				r.Warnings = append(r.Warnings, PairwiseNote)
				r.settle()
				pairResults = append(pairResults, r)
				out.Pairs = append(out.Pairs, Pair{Observable: name, I: i, J: j, Result: r})
			}
		}
		tr, err := teamsColumn(tables, labels, name, sel, &e)
		if err != nil {
			return nil, err
		}
		if tr != nil {
			out.Results = append(out.Results, tr)
		}
	}
	if err := unusedCorrelations(e, matched, sels); err != nil {
		return nil, err
	}
	// One Holm family: the N-team criteria of every column. The pairs hold
	// no p-value criterion, so adjusting them too changes nothing in the
	// family; it sets their Alpha and settles them.
	shadows := make([]*Result, len(out.Results))
	for k, tr := range out.Results {
		shadows[k] = &Result{Criteria: tr.Criteria}
	}
	if err := AdjustFamily(append(shadows, pairResults...), e.Alpha); err != nil {
		return nil, err
	}
	for k, tr := range out.Results {
		sh := shadows[k]
		tr.Criteria, tr.Alpha, tr.Family, tr.Pass = sh.Criteria, sh.Alpha, sh.Family, sh.Pass
		if len(tr.Criteria) == 0 {
			tr.Pass = true // alpha 0: only the pairs' tolerances judge
		}
		tr.Departs = nil
		for _, c := range tr.Criteria {
			if team, ok := strings.CutSuffix(c.Name, ": "+CritTeamLOO); ok && !c.Pass && !slices.Contains(tr.Departs, team) {
				tr.Departs = append(tr.Departs, team)
			}
			if team, ok := strings.CutSuffix(c.Name, ": "+CritTeamShift); ok && !c.Pass && !slices.Contains(tr.Departs, team) {
				tr.Departs = append(tr.Departs, team)
			}
		}
	}
	for _, tr := range out.Results {
		if tr.Test == nil {
			continue
		}
		// the team farthest from the others first
		minP := map[string]float64{}
		for _, d := range tr.Test.LeaveOneOut {
			minP[d.Team] = d.MinPValue()
		}
		slices.SortStableFunc(tr.Departs, func(a, b string) int { return cmp.Compare(minP[a], minP[b]) })
	}
	for _, r := range pairResults {
		r.Family = 0
	}
	return out, nil
}

// teamsColumn runs the N-team test of one selection; nil when the column
// has no uncertainty source (a numerical tolerance then judges the pairs
// alone).
func teamsColumn(tables []*table.Table, labels []string, name string, sel Selection, e *Options) (*TeamsResult, error) {
	n := len(tables)
	bins := tables[0].Len()
	tr := &TeamsResult{Observable: name, Column: sel.Value, Teams: slices.Clone(labels),
		Lo: tables[0].Lo, Hi: tables[0].Hi, Values: make([][]float64, n), Sigma: make([][]float64, n)}
	in := consistency.Input{Teams: tr.Teams, Values: make([][]float64, n)}
	for t, tab := range tables {
		tr.Files = append(tr.Files, tab.Source)
		tr.Values[t] = tab.Column(sel.Value)
		in.Values[t] = tr.Values[t]
	}
	var srcErr error
	add := func(src string, sigma func(t, i int) float64) {
		_, rho, ok := lookup(e.Correlations, src, sel.Value)
		if !ok {
			rho = e.Default
		}
		if lim := -1 / float64(n-1); rho.Value < lim && srcErr == nil {
			// the correlation matrix of n teams with one common ρ is
			// positive semi-definite only for ρ ≥ −1/(n−1)
			srcErr = fmt.Errorf("error source %q: correlation %s between %d teams is below −1/(N−1) = %s: no %d teams can all be correlated that negatively",
				src, table.Format(rho.Value), n, table.Format(lim), n)
		}
		s := consistency.Source{Name: src, Sigma: make([][]float64, n), Rho: rho.Value}
		for t := range n {
			s.Sigma[t] = make([]float64, bins)
			for i := range bins {
				s.Sigma[t][i] = sigma(t, i)
			}
		}
		in.Sources = append(in.Sources, s)
		tr.Sources = append(tr.Sources, TeamSource{Name: src, Rho: rho.Value, Declared: rho.Set})
	}
	for _, col := range sel.Errors {
		add(col, func(t, i int) float64 { return tables[t].Column(col)[i] })
	}
	asym := false
	for k := range sel.Minus {
		lo, hi := sel.Minus[k], sel.Plus[k]
		add(strings.TrimSuffix(lo, "_minus"), func(t, i int) float64 {
			d, u := tables[t].Column(lo)[i], tables[t].Column(hi)[i]
			asym = asym || d != u
			return (d + u) / 2
		})
	}
	if srcErr != nil {
		return nil, srcErr
	}
	if len(in.Sources) == 0 {
		if e.AbsTol > 0 || e.RelTol > 0 {
			return nil, nil
		}
		return nil, &NoUncertaintyError{Source: tables[0].Source, Column: sel.Value}
	}
	if asym {
		tr.Warnings = append(tr.Warnings, "asymmetric errors: the N-team test uses the mean of each lower and upper error")
	}
	declared := e.Default.Set
	for _, s := range tr.Sources {
		declared = declared || s.Declared
	}
	if !declared {
		tr.Warnings = append(tr.Warnings, "correlation of the teams' errors taken as 0: if teams share events or systematic inputs, the test is too lenient; declare the correlations")
	}
	for t := range n {
		tr.Sigma[t] = make([]float64, bins)
		for i := range bins {
			var s2 float64
			for _, s := range in.Sources {
				s2 += s.Sigma[t][i] * s.Sigma[t][i]
			}
			tr.Sigma[t][i] = math.Sqrt(s2)
		}
	}
	// A bin where some team has no uncertainty cannot enter the test (its
	// covariance is singular): when every team has σ = 0 and the same
	// value it is left out with a warning, otherwise it is incomparable
	// and fails the comparable-bins check.
	var used, incomparable []int
	left := 0
	for i := range bins {
		zero, all, same := false, true, true
		for k := range n {
			z := tr.Sigma[k][i] == 0
			zero, all = zero || z, all && z
			same = same && tr.Values[k][i] == tr.Values[0][i]
		}
		switch {
		case !zero:
			used = append(used, i)
		case all && same:
			left++
		default:
			incomparable = append(incomparable, i+1)
		}
	}
	if left > 0 {
		tr.Warnings = append(tr.Warnings, fmt.Sprintf("%d bin(s) where every team has the same value and no uncertainty left out of the N-team test", left))
	}
	if len(incomparable) > 0 {
		tr.Criteria = append(tr.Criteria, Criterion{Name: CritComparable, Kind: KindCheck, Value: float64(len(incomparable)), Limit: 0, Op: "<=",
			Bins: incomparable, Detail: fmt.Sprintf("%d bin(s) where a team has no uncertainty cannot enter the N-team test: bin(s) %s", len(incomparable), binList(incomparable))})
	}
	if len(used) == 0 {
		tr.Warnings = append(tr.Warnings, "no bin where every team has an uncertainty: no N-team test")
		return tr, nil
	}
	if len(used) < bins {
		in = subsetBins(in, used)
	}
	res, err := consistency.Test(in)
	if err != nil {
		return nil, fmt.Errorf("column %q: %w", sel.Value, err)
	}
	if len(used) < bins {
		expandBins(res, used, bins)
	}
	tr.Test = res
	tr.Departing = res.Departing().Team
	if e.Alpha > 0 {
		p := func(name string, v float64, why string) {
			tr.Criteria = append(tr.Criteria, Criterion{Name: name, Kind: KindPValue, Value: v, Limit: e.Alpha, Op: ">", Pass: true, why: why})
		}
		p(CritTeams, res.PValue, fmt.Sprintf("χ² = %s for %d degrees of freedom: the %d teams do not agree with one common value per bin", fmtG(res.Chi2), res.NDF, n))
		for _, d := range res.LeaveOneOut {
			p(d.Team+": "+CritTeamLOO, d.PValue, fmt.Sprintf("team %s departs from the combination of the others: χ² = %s for %d degrees of freedom", d.Team, fmtG(d.Chi2), d.NDF))
			p(d.Team+": "+CritTeamShift, d.ShiftPValue, fmt.Sprintf("team %s is shifted against the combination of the others: mean pull %s, z = %s", d.Team, fmtG(d.MeanPull), fmtG(d.ShiftZ)))
		}
	}
	return tr, nil
}

// subsetBins is in restricted to the bins idx.
func subsetBins(in consistency.Input, idx []int) consistency.Input {
	pick := func(xs []float64) []float64 {
		out := make([]float64, len(idx))
		for k, i := range idx {
			out[k] = xs[i]
		}
		return out
	}
	out := consistency.Input{Teams: in.Teams}
	for _, v := range in.Values {
		out.Values = append(out.Values, pick(v))
	}
	for _, s := range in.Sources {
		ns := consistency.Source{Name: s.Name, Rho: s.Rho}
		for _, sg := range s.Sigma {
			ns.Sigma = append(ns.Sigma, pick(sg))
		}
		out.Sources = append(out.Sources, ns)
	}
	return out
}

// expandBins spreads the per-bin results of the bins idx back over all
// bins, NaN (undefined) where a bin was left out.
func expandBins(r *consistency.Result, idx []int, bins int) {
	spread := func(xs []float64) []float64 {
		out := make([]float64, bins)
		for i := range out {
			out[i] = math.NaN()
		}
		for k, i := range idx {
			out[i] = xs[k]
		}
		return out
	}
	r.BinChi2, r.Combined, r.CombinedSigma = spread(r.BinChi2), spread(r.Combined), spread(r.CombinedSigma)
	for t := range r.LeaveOneOut {
		r.LeaveOneOut[t].Pulls = spread(r.LeaveOneOut[t].Pulls)
	}
}
