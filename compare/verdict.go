package compare

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"tandem/compare/stats"
)

func (r *Result) warn(opt *Options, statistical bool) {
	if !statistical {
		r.Warnings = append(r.Warnings, "no uncertainties: only the numerical tolerance judges, no pull statistics")
		return
	}
	if !opt.Declared() {
		r.Warnings = append(r.Warnings,
			"correlation of the two chains' errors taken as 0: if both chains use the same events, the pulls are too small and the test too lenient; declare the correlation")
	}
	if k := len(r.ZeroSigma) - len(r.Incomparable); k > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%d bin(s) with d = 0 and zero combined uncertainty left out of the pulls and χ²", k))
	}
	if r.Asymmetric {
		r.Warnings = append(r.Warnings, "asymmetric errors: each side uses the error that faces the other value")
	}
	if r.NDF == 1 && r.Bins > 1 {
		r.Warnings = append(r.Warnings, "only one bin carries a pull: no pull width")
	}
	if r.Covariance && r.Condition > CondWarn {
		r.Warnings = append(r.Warnings, fmt.Sprintf("W = Va + Vb - C - Cᵀ is ill-conditioned (condition number %.3g): χ² may have lost up to %d of its 16 digits", r.Condition, int(math.Log10(r.Condition))))
	}
	if opt.effective().MaxPull > 0 {
		r.Warnings = append(r.Warnings, "the max |pull| limit is a raw tolerance, not corrected for the number of bins")
	}
}

// judge builds the criteria in their fixed order. The p-value criteria
// are passed provisionally; [AdjustFamily] decides them.
func (r *Result) judge(e Options, statistical bool) {
	var cs []Criterion
	if statistical {
		c := Criterion{Name: CritComparable, Kind: KindCheck, Value: float64(len(r.Incomparable)), Limit: 0, Op: "<=",
			Pass: len(r.Incomparable) == 0 && r.NDF > 0}
		switch {
		case len(r.Incomparable) > 0:
			c.Bins = oneBased(r.Incomparable)
			c.Detail = fmt.Sprintf("%d bin(s) with d ≠ 0 but σ_d = 0 cannot be compared: bin(s) %s", len(c.Bins), binList(c.Bins))
		case r.NDF == 0:
			c.Detail = "no bin carries a pull (ndf = 0): every combined uncertainty is zero"
			c.Bins = oneBased(r.ZeroSigma)
		}
		cs = append(cs, c)
	}
	// with no bin carrying a pull there is nothing to test: the p-values
	// would read 1, and the comparable-bins check already fails
	if statistical && e.Alpha > 0 && r.NDF > 0 {
		p := func(name string, v float64, why string) {
			cs = append(cs, Criterion{Name: name, Kind: KindPValue, Value: v, Limit: e.Alpha, Op: ">", Pass: true, why: why})
		}
		p(CritChi2, r.PValue, fmt.Sprintf("χ² = %s for %d degrees of freedom", fmtG(r.Chi2), r.NDF))
		ksWhy := fmt.Sprintf("pulls are not distributed as N(0,1): D = %s", fmtG(r.KSStat))
		if r.identical() {
			ksWhy = "the tables are identical bin for bin (every pull is 0), which two independent chains do not produce; if they must agree to rounding, judge with --abs-tol/--rel-tol and --alpha 0"
		}
		p(CritKS, r.KSP, ksWhy)
		p(CritRuns, r.RunsP, fmt.Sprintf("%d runs in %d positive and %d negative differences: a coherent trend", r.Runs, r.RunsPos, r.RunsNeg))
		p(CritMaxPullP, r.MaxPullP, fmt.Sprintf("|pull| %s is unlikely among %d bins", fmtG(r.MaxAbsPull), r.NDF))
	}
	cs = append(cs, r.tolerances(e, statistical)...)
	r.Criteria = cs
	r.Alpha = e.Alpha
	r.settle()
}

// tolerances are the declared raw |pull| and numerical tolerances.
func (r *Result) tolerances(e Options, statistical bool) []Criterion {
	var cs []Criterion
	if statistical && e.MaxPull > 0 {
		c := Criterion{Name: CritMaxPull, Kind: KindTolerance, Value: r.MaxAbsPull, Limit: e.MaxPull, Op: "<=",
			Pass: r.MaxAbsPull <= e.MaxPull, Note: "raw limit, not trials-corrected"}
		if !c.Pass {
			for i, p := range r.Pulls {
				if math.Abs(p) > e.MaxPull {
					c.Bins = append(c.Bins, i+1)
				}
			}
			c.Detail = "no bin carries a pull"
			if r.MaxPullBin >= 0 {
				c.Detail = fmt.Sprintf("bin %d has pull %s", r.MaxPullBin+1, fmtG(r.Pulls[r.MaxPullBin]))
			}
		}
		cs = append(cs, c)
	}
	if e.AbsTol > 0 || e.RelTol > 0 {
		cs = append(cs, r.tolerance(e.AbsTol, e.RelTol))
	}
	return cs
}

// tolerance is the numerical-agreement criterion.
func (r *Result) tolerance(abs, rel float64) Criterion {
	worst, worstBin := 0.0, 0
	var bad []int
	for i := range r.A {
		tol := math.Max(abs, rel*math.Max(math.Abs(r.A[i]), math.Abs(r.B[i])))
		ex := math.Abs(r.Diff[i])
		if ex > tol {
			bad = append(bad, i+1)
		}
		// ratio of the difference to the allowed tolerance
		q := math.Inf(1)
		if tol > 0 {
			q = ex / tol
		} else if ex == 0 {
			q = 0
		}
		if q > worst || i == 0 {
			worst, worstBin = q, i
		}
	}
	c := Criterion{Name: CritNumerical, Kind: KindTolerance, Value: worst, Limit: 1, Op: "<=", Pass: len(bad) == 0}
	if !c.Pass {
		c.Bins = bad
		c.Detail = fmt.Sprintf("%d bin(s) beyond tolerance; worst is bin %d (a = %s, b = %s)", len(bad), worstBin+1, fmtG(r.A[worstBin]), fmtG(r.B[worstBin]))
	}
	return c
}

// settle sets r.Pass from the criteria.
func (r *Result) settle() {
	r.Pass = len(r.Criteria) > 0
	for _, c := range r.Criteria {
		r.Pass = r.Pass && c.Pass
	}
}

// AdjustFamily decides the p-value criteria of every result together, so
// that the probability that any of them fails when all comparisons agree is
// at most alpha, whatever the dependence between them: Holm's step-down
// method, [stats.Holm], over the m p-value criteria of all the results. A
// criterion passes when its adjusted p-value p̃ > alpha; an undefined
// (NaN) p-value never passes. A campaign passes all its results (every
// observable, column and team pair) at once; table mode passes the results
// of one command. Each result's Pass, Alpha and Family are updated.
func AdjustFamily(results []*Result, alpha float64) error {
	type ref struct{ r, c int }
	var refs []ref
	for ri, r := range results {
		for ci, c := range r.Criteria {
			if c.Kind == KindPValue {
				refs = append(refs, ref{ri, ci})
			}
		}
	}
	if len(refs) > 0 && (math.IsNaN(alpha) || alpha <= 0 || alpha >= 1) {
		return fmt.Errorf("alpha must be in (0, 1), got %v", alpha)
	}
	ps := make([]float64, len(refs))
	for i, x := range refs {
		ps[i] = results[x.r].Criteria[x.c].Value
	}
	for i, adj := range stats.Holm(ps) {
		x := refs[i]
		c := &results[x.r].Criteria[x.c]
		c.Adjusted = &adj
		c.Limit = alpha
		c.Pass = adj > alpha
		c.Detail = ""
		if !c.Pass {
			c.Detail = c.why
		}
	}
	m := len(refs)
	for _, r := range results {
		r.Alpha, r.Family = alpha, m
		for i := range r.Criteria {
			if r.Criteria[i].Kind == KindPValue {
				r.Criteria[i].Limit = alpha
			}
		}
		r.settle()
	}
	return nil
}

// Failures lists the failed criteria in words.
func (r *Result) Failures() []string {
	out := []string{}
	for _, c := range r.Criteria {
		if c.Pass {
			continue
		}
		if c.Adjusted != nil {
			out = append(out, fmt.Sprintf("%s %s (adjusted %s) not %s %s: %s", c.Name, fmtG(c.Value), fmtG(*c.Adjusted), c.Op, fmtG(c.Limit), c.Detail))
			continue
		}
		out = append(out, fmt.Sprintf("%s %s not %s %s: %s", c.Name, fmtG(c.Value), c.Op, fmtG(c.Limit), c.Detail))
	}
	return out
}

func fmtG(v float64) string { return fmt.Sprintf("%.4g", v) }

func oneBased(bins []int) []int {
	out := make([]int, len(bins))
	for i, b := range bins {
		out[i] = b + 1
	}
	return out
}

// binList writes at most 20 bin numbers.
func binList(bins []int) string {
	var b strings.Builder
	for i, v := range bins {
		if i == 20 {
			fmt.Fprintf(&b, " and %d more", len(bins)-20)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(strconv.Itoa(v))
	}
	return b.String()
}

// identical reports whether both sides hold the same value in every bin.
func (r *Result) identical() bool {
	if len(r.A) == 0 || len(r.A) != len(r.B) {
		return false
	}
	for i := range r.A {
		if r.A[i] != r.B[i] {
			return false
		}
	}
	return true
}
