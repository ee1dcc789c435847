package compare

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"tandem/compare/consistency"
	"tandem/compare/table"
)

// teamTables builds n teams' tables of one column "flux" with a
// statistical and a systematic error column; team k's values are shifted
// by shift[k] times its total error.
func teamTables(t *testing.T, seed uint64, n, bins int, shift []float64, extra string) []*table.Table {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 3))
	var out []*table.Table
	for k := range n {
		var b strings.Builder
		b.WriteString("lo,hi,flux,stat,syst" + extra + "\n")
		for i := range bins {
			st, sy := 1+0.2*float64(k), 0.5
			v := 50 + 5*math.Cos(float64(i)) + st*rng.NormFloat64() + sy*rng.NormFloat64()
			if shift != nil {
				v += shift[k] * math.Hypot(st, sy)
			}
			fmt.Fprintf(&b, "%d,%d,%.17g,%g,%g", i, i+1, v, st, sy)
			if extra != "" {
				b.WriteString(",0.5")
			}
			b.WriteString("\n")
		}
		tab, err := table.ParseCSV(fmt.Sprintf("t%d.csv", k), []byte(b.String()), table.CSVOptions{Lo: "lo", Hi: "hi"})
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, tab)
	}
	return out
}

var teamSel = []Selection{{Value: "flux", Errors: []string{"stat", "syst"}}}

// TestTeamsFamily: the N-team statistics are those of package
// consistency on the same input; the Holm family holds exactly the
// N-team p-values (1 + 2N per column), the pairs none; a shifted team is
// named.
func TestTeamsFamily(t *testing.T) {
	labels := []string{"a", "b", "c", "d"}
	opt := Defaults()
	opt.Correlations = map[string]Rho{"syst": Number(0.4)}
	tc, err := Teams(teamTables(t, 1, 4, 25, []float64{0, 0, 1.2, 0}, ""), labels, "obs", teamSel, opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(tc.Results) != 1 || len(tc.Pairs) != 6 {
		t.Fatalf("%d results, %d pairs", len(tc.Results), len(tc.Pairs))
	}
	tr := tc.Results[0]
	in := consistency.Input{Teams: labels, Values: tr.Values}
	for _, name := range []string{"stat", "syst"} {
		s := consistency.Source{Name: name, Rho: map[string]float64{"stat": 0, "syst": 0.4}[name]}
		for _, tab := range teamTables(t, 1, 4, 25, []float64{0, 0, 1.2, 0}, "") {
			s.Sigma = append(s.Sigma, tab.Column(name))
		}
		in.Sources = append(in.Sources, s)
	}
	want, err := consistency.Test(in)
	if err != nil {
		t.Fatal(err)
	}
	if tr.Test.Chi2 != want.Chi2 || !slices.Equal(tr.Test.PValues(), want.PValues()) {
		t.Fatalf("χ² %v, p %v; consistency.Test gives %v, %v", tr.Test.Chi2, tr.Test.PValues(), want.Chi2, want.PValues())
	}
	if tr.Family != 9 || len(tr.Criteria) != 9 {
		t.Fatalf("family %d, %d criteria; want 9", tr.Family, len(tr.Criteria))
	}
	for k, c := range tr.Criteria {
		if c.Kind != KindPValue || c.Value != want.PValues()[k] {
			t.Fatalf("criterion %d %q = %v, want the p-value %v", k, c.Name, c.Value, want.PValues()[k])
		}
	}
	for _, p := range tc.Pairs {
		if p.Family != 0 || !slices.Contains(p.Warnings, PairwiseNote) {
			t.Fatalf("pair %s-%s: family %d, warnings %v", p.LabelA, p.LabelB, p.Family, p.Warnings)
		}
		for _, c := range p.Criteria {
			if c.Kind == KindPValue {
				t.Fatalf("pair %s-%s holds p-value criterion %q", p.LabelA, p.LabelB, c.Name)
			}
		}
	}
	if tr.Pass || tr.Departing != "c" || len(tr.Departs) == 0 || tr.Departs[0] != "c" {
		t.Fatalf("pass %v, departing %q, departs %v; want c to fail", tr.Pass, tr.Departing, tr.Departs)
	}
	if allTeamsPass(tc.Results) {
		t.Fatal("a summary with a failing N-team test passes")
	}

	// Holm over the family, by hand: m = 9 p-values.
	ps := want.PValues()
	order := make([]int, len(ps))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(x, y int) int { return cmpF(ps[x], ps[y]) })
	run := 0.0
	for j, i := range order {
		run = math.Max(run, math.Min(1, float64(len(ps)-j)*ps[i]))
		if got := *tr.Criteria[i].Adjusted; math.Abs(got-run) > 1e-15 {
			t.Fatalf("criterion %d adjusted %v, Holm gives %v", i, got, run)
		}
	}
}

func cmpF(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// TestTeamsRefusals: settings that describe two tables only are refused
// with a message that says why.
func TestTeamsRefusals(t *testing.T) {
	tabs := teamTables(t, 2, 3, 5, nil, ",rho")
	labels := []string{"a", "b", "c"}
	for name, tc := range map[string]struct {
		opt  func(*Options)
		want string
	}{
		"per-bin rho":  {func(o *Options) { o.Correlations = map[string]Rho{"syst": {Column: "rho", Set: true}} }, "per-bin correlation column"},
		"default rho":  {func(o *Options) { o.Default = Rho{Column: "rho", Set: true} }, "per-bin correlation column"},
		"subset":       {func(o *Options) { o.Subset = true }, "subset rule"},
		"overlap":      {func(o *Options) { o.Overlap = Overlap{Count: "n", Common: "c"} }, "overlap"},
		"unknown name": {func(o *Options) { o.Correlations = map[string]Rho{"lumi": Number(1)} }, `"lumi"`},
		"rho < -1/2":   {func(o *Options) { o.Correlations = map[string]Rho{"syst": Number(-0.6)} }, "below −1/(N−1) = -0.5"},
	} {
		o := Defaults()
		tc.opt(&o)
		_, err := Teams(tabs, labels, "obs", teamSel, o)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want one that mentions %s", name, err, tc.want)
		}
	}
	if _, err := Teams(tabs[:2], labels[:2], "obs", teamSel, Defaults()); err == nil {
		t.Error("two tables accepted by the N-team test")
	}
	// alpha 0 with a tolerance: no N-team criterion, the pairs judge
	o := Defaults()
	o.Alpha, o.AbsTol = 0, 1e9
	tc, err := Teams(tabs, labels, "obs", teamSel, o)
	if err != nil {
		t.Fatal(err)
	}
	if tr := tc.Results[0]; len(tr.Criteria) != 0 || !tr.Pass {
		t.Fatalf("alpha 0: %d criteria, pass %v", len(tr.Criteria), tr.Pass)
	}
}

// TestTeamsCalibration runs the whole table-mode path (Teams, with its
// pairs and the one Holm family) on agreeing teams: the verdict fails at
// most α of the time, within three binomial standard errors. Fixed seeds.
// The N-team statistics alone are calibrated at more sizes in package
// consistency (TestCalibration).
func TestTeamsCalibration(t *testing.T) {
	if testing.Short() {
		t.Skip("calibration runs hundreds of comparisons")
	}
	const trials, alpha = 400, 0.05
	for _, n := range []int{3, 5} {
		fails := 0
		for k := range trials {
			opt := Defaults()
			opt.Alpha = alpha
			labels := []string{"a", "b", "c", "d", "e"}[:n]
			tc, err := Teams(teamTables(t, uint64(1000*n+k), n, 20, nil, ""), labels, "obs", teamSel, opt)
			if err != nil {
				t.Fatal(err)
			}
			if !allTeamsPass(tc.Results) {
				fails++
			}
		}
		rate := float64(fails) / trials
		limit := alpha + 3*math.Sqrt(alpha*(1-alpha)/trials)
		t.Logf("%d teams, 20 bins, α = %g: %d/%d = %.4f fail (limit %.4f)", n, alpha, fails, trials, rate, limit)
		if rate > limit {
			t.Errorf("%d teams: false-alarm rate %.4f above %.4f", n, rate, limit)
		}
	}
}

// TestTeamsZeroUncertainty: a bin where every team has the same value and
// no uncertainty is left out with a warning; a bin where one team has no
// uncertainty fails the comparable-bins check, and the other bins are
// still tested.
func TestTeamsZeroUncertainty(t *testing.T) {
	labels := []string{"a", "b", "c"}
	mk := func(rows [3]string) []*table.Table {
		var out []*table.Table
		for k, r := range rows {
			tab, err := table.ParseCSV(labels[k]+".csv", []byte("lo,hi,flux,stat,syst\n"+r), table.CSVOptions{Lo: "lo", Hi: "hi"})
			if err != nil {
				t.Fatal(err)
			}
			out = append(out, tab)
		}
		return out
	}
	tc, err := Teams(mk([3]string{
		"0,1,5,1,0\n1,2,0,0,0\n2,3,7,1,0\n",
		"0,1,6,1,0\n1,2,0,0,0\n2,3,7,1,0\n",
		"0,1,5,1,0\n1,2,0,0,0\n2,3,6,1,0\n"}), labels, "obs", teamSel, Defaults())
	if err != nil {
		t.Fatal(err)
	}
	tr := tc.Results[0]
	if !tr.Pass || tr.Test == nil || tr.Test.NDF != 4 || !math.IsNaN(tr.Test.BinChi2[1]) || len(tr.Test.LeaveOneOut[0].Pulls) != 3 {
		t.Fatalf("left-out bin: pass %v, test %+v", tr.Pass, tr.Test)
	}
	if !slices.ContainsFunc(tr.Warnings, func(w string) bool { return strings.Contains(w, "1 bin(s) where every team has the same value") }) {
		t.Fatalf("no warning: %v", tr.Warnings)
	}
	tc, err = Teams(mk([3]string{
		"0,1,5,1,0\n1,2,3,0,0\n2,3,7,1,0\n",
		"0,1,6,1,0\n1,2,4,1,0\n2,3,7,1,0\n",
		"0,1,5,1,0\n1,2,3,1,0\n2,3,6,1,0\n"}), labels, "obs", teamSel, Defaults())
	if err != nil {
		t.Fatal(err)
	}
	tr = tc.Results[0]
	if tr.Pass || tr.Criteria[0].Name != CritComparable || tr.Criteria[0].Pass || !slices.Equal(tr.Criteria[0].Bins, []int{2}) || tr.Test.NDF != 4 {
		t.Fatalf("incomparable bin: pass %v, criteria %+v", tr.Pass, tr.Criteria)
	}
}

// allTeamsPass reports whether every N-team test passes, as a report's
// overall verdict reads them.
func allTeamsPass(rs []*TeamsResult) bool {
	for _, r := range rs {
		if !r.Pass {
			return false
		}
	}
	return true
}
