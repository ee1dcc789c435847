package compare

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"tandem/compare/table"
)

// falling returns the issue's spectrum: n bins with means μ·e^(-2x), x the
// bin centre in [0, 1].
func falling(n int, mu float64) []float64 {
	m := make([]float64, n)
	for i := range m {
		m[i] = mu * math.Exp(-2*(float64(i)+0.5)/float64(n))
	}
	return m
}

// withSqrtErrors adds the column "stat" = √n that the chains print.
func withSqrtErrors(t *table.Table) *table.Table {
	c := t.Column("n")
	s := make([]float64, len(c))
	for i, v := range c {
		s[i] = math.Sqrt(v)
	}
	u := *t
	u.Names = append(slices.Clone(t.Names), "stat")
	u.Cols = append(slices.Clone(t.Cols), s)
	return &u
}

// gaussianVerdict is today's default on the same tables: --error stat
// --correlation 0.
func gaussianVerdict(t *testing.T, a, b *table.Table) (*Result, bool) {
	t.Helper()
	o := Defaults()
	o.Default = Number(0)
	rs, err := Columns(withSqrtErrors(a), withSqrtErrors(b), []Selection{{Value: "n", Errors: []string{"stat"}}}, o)
	if err != nil {
		t.Fatal(err)
	}
	return rs[0], rs[0].Pass
}

// TestCountsIssueReproducer is the case of issue 20: both chains hold
// independent Poisson counts of 30 bins with means e^(-2x) (μ = 1), with
// σ = √n. With counts the false-alarm rate is at most α = 0.01 within its
// binomial error; without, the result carries the warning that names
// counts mode (its Gaussian false-alarm rate is printed for comparison).
func TestCountsIssueReproducer(t *testing.T) {
	trials := 300
	if testing.Short() {
		trials = 100
	}
	rng := rand.New(rand.NewPCG(20, 1))
	opt := countsOpt()
	opt.MCSamples = 2000
	fails, gaussFails, warned, empty := 0, 0, 0, 0
	for k := range trials {
		a, b := countPair(rng, falling(30, 1), 0, nil)
		opt.Seed = uint64(k)
		rs, err := Columns(a, b, []Selection{{Value: "n"}}, opt)
		if err != nil {
			t.Fatal(err)
		}
		if rs[0].Counts.Informative == 0 {
			empty++
			continue
		}
		if !rs[0].Pass {
			fails++
		}
		g, pass := gaussianVerdict(t, a, b)
		if !pass {
			gaussFails++
		}
		if slices.Contains(g.Warnings, CountsLikeWarning) {
			warned++
		}
	}
	checkRateAt(t, "issue 20 reproducer, counts", fails, trials, 0.01)
	if warned != trials-empty {
		t.Errorf("the counts warning was given on %d of %d comparisons", warned, trials-empty)
	}
	t.Logf("counts: %d/%d false alarms; Gaussian pulls: %d/%d; %d pairs without any event", fails, trials, gaussFails, trials, empty)
}

// TestCountsPower prints the power table of the README (go test -run
// TestCountsPower -v ./compare): the counts verdict against today's
// Gaussian pulls (σ = √n, ρ = 0) at α = 0.01 on 30 bins of the falling
// spectrum μ·e^(-2x) with μ = 50 (7 events in the last bin), when B's truth has a 50 % excess in one
// bin (the first), a 20 % excess everywhere, or a shape change (B's truth
// tilted by ±30 % from first to last bin). It checks only that each
// disagreement is found more often by the counts verdict than agreeing
// tables fail it.
func TestCountsPower(t *testing.T) {
	trials := 300
	if testing.Short() {
		trials = 60
	}
	scen := []struct {
		name  string
		scale func(i int) float64
	}{
		{"none (agreeing)", nil},
		{"50 % excess in the first bin", func(i int) float64 {
			if i == 0 {
				return 1.5
			}
			return 1
		}},
		{"20 % excess in every bin", func(int) float64 { return 1.2 }},
		{"shape: tilt ±30 %", func(i int) float64 { return 1 + 0.3*(2*(float64(i)+0.5)/30-1) }},
	}
	t.Logf("| B's truth | counts verdict fails | Gaussian pulls fail |")
	t.Logf("| --- | --- | --- |")
	var agree float64
	for si, s := range scen {
		rng := rand.New(rand.NewPCG(77, uint64(si)))
		opt := countsOpt()
		opt.MCSamples = 2000
		fc, fg := 0, 0
		for k := range trials {
			a, b := countPair(rng, falling(30, 50), 0, s.scale)
			opt.Seed = uint64(k)
			rs, err := Columns(a, b, []Selection{{Value: "n"}}, opt)
			if err != nil {
				t.Fatal(err)
			}
			if !rs[0].Pass {
				fc++
			}
			if _, pass := gaussianVerdict(t, a, b); !pass {
				fg++
			}
		}
		rc, rg := float64(fc)/float64(trials), float64(fg)/float64(trials)
		t.Logf("| %s | %.3f | %.3f |", s.name, rc, rg)
		if si == 0 {
			agree = rc
		} else if rc <= agree {
			t.Errorf("%s: the counts verdict fails %.3f, no more than agreeing tables (%.3f)", s.name, rc, agree)
		}
	}
}
