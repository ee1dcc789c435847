package compare

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"tandem/compare/table"
)

// Calibration and power of the default verdict (α = 0.01, Holm over the
// χ², KS, runs and trials-corrected largest-pull p-values), by simulation
// with fixed seeds. The false-alarm rate of agreeing tables must not exceed
// α by more than its binomial error; the power against standard
// disagreements is printed (go test -run TestPower -v ./compare).

// pairWith makes two tables of n bins whose values scatter around a true
// curve with the stated Gaussian errors; shift(i, σ_d) is added to B's
// truth.
func pairWith(rng *rand.Rand, n int, shift func(i int, truth, sd float64) float64) (*table.Series, *table.Series) {
	a := &table.Series{Column: "y", Lo: make([]float64, n), Hi: make([]float64, n), V: make([]float64, n), Down: make([]float64, n)}
	b := &table.Series{Column: "y", Lo: a.Lo, Hi: a.Hi, V: make([]float64, n), Down: make([]float64, n)}
	for i := 0; i < n; i++ {
		a.Lo[i], a.Hi[i] = float64(i), float64(i+1)
		truth := 1000 * math.Exp(-2*float64(i)/float64(n))
		e := math.Sqrt(truth)
		a.Down[i], b.Down[i] = e, e
		tb := truth
		if shift != nil {
			tb += shift(i, truth, math.Sqrt2*e)
		}
		a.V[i] = truth + e*rng.NormFloat64()
		b.V[i] = tb + e*rng.NormFloat64()
	}
	a.Up, b.Up = a.Down, b.Down
	return a, b
}

// declared0 is the default with ρ = 0 declared (the simulated chains are
// independent).
func declared0() Options {
	o := Defaults()
	o.Default = Number(0)
	return o
}

// binomialTail is P(X >= k) for X ~ Binomial(n, p).
func binomialTail(k, n int, p float64) float64 {
	if k <= 0 {
		return 1
	}
	return distuv.Binomial{N: float64(n), P: p}.Survival(float64(k) - 0.5)
}

func TestCalibration(t *testing.T) {
	cases := []struct {
		bins, trials int
	}{{20, 4000}, {1000, 600}, {100000, 24}}
	if testing.Short() {
		cases[0].trials, cases[1].trials, cases[2].trials = 1000, 100, 4
	}
	rng := rand.New(rand.NewPCG(20, 26))
	for _, c := range cases {
		fails := 0
		for k := 0; k < c.trials; k++ {
			a, b := pairWith(rng, c.bins, nil)
			r, err := Series(a, b, declared0())
			if err != nil {
				t.Fatal(err)
			}
			if !r.Pass {
				fails++
			}
		}
		checkRate(t, fmt.Sprintf("%d bins", c.bins), fails, c.trials)
	}
	// A campaign-sized family: 200 observables of 20 bins adjusted
	// together; the family fails when any of its 800 p-values does.
	trials := 300
	if testing.Short() {
		trials = 50
	}
	fails := 0
	for k := 0; k < trials; k++ {
		rs := make([]*Result, 200)
		for j := range rs {
			a, b := pairWith(rng, 20, nil)
			r, err := Series(a, b, declared0())
			if err != nil {
				t.Fatal(err)
			}
			rs[j] = r
		}
		if err := AdjustFamily(rs, DefaultAlpha); err != nil {
			t.Fatal(err)
		}
		for _, r := range rs {
			if !r.Pass {
				fails++
				break
			}
		}
	}
	checkRate(t, "200-observable family", fails, trials)
}

// checkRate fails when k false alarms in n trials are significantly (one-
// sided, at 0.1 %) more than α allows.
func checkRate(t *testing.T, what string, k, n int) {
	t.Helper()
	p := binomialTail(k, n, DefaultAlpha)
	t.Logf("%s: %d false alarms in %d trials (rate %.4f ± %.4f), P(>= %d | α = %v) = %.3g",
		what, k, n, float64(k)/float64(n), math.Sqrt(DefaultAlpha*(1-DefaultAlpha)/float64(n)), k, DefaultAlpha, p)
	if p < 1e-3 {
		t.Errorf("%s: false-alarm rate %d/%d exceeds α = %v beyond its binomial error", what, k, n, DefaultAlpha)
	}
}

// TestPower prints the power of the default verdict, of the earlier
// default (each raw p-value at 0.01 and max |pull| <= 3, no correction), and
// of each criterion on its own at α, against standard disagreements, and
// checks that
// disagreements the statistics are built for are found.
func TestPower(t *testing.T) {
	type scenario struct {
		name  string
		shift func(i, n int, truth, sd float64) float64
	}
	scenarios := []scenario{
		{"none (agreeing)", nil},
		{"0.5σ global shift", func(i, n int, truth, sd float64) float64 { return 0.5 * sd }},
		{"±1σ linear trend", func(i, n int, truth, sd float64) float64 { return sd * (2*float64(i)/float64(n-1) - 1) }},
		{"one 5σ bin", func(i, n int, truth, sd float64) float64 {
			if i == n/2 {
				return 5 * sd
			}
			return 0
		}},
		{"2 % scale", func(i, n int, truth, sd float64) float64 { return 0.02 * truth }},
	}
	trials := 400
	if testing.Short() {
		trials = 50
	}
	names := []string{CritChi2, CritKS, CritRuns, CritMaxPullP}
	var out strings.Builder
	fmt.Fprintf(&out, "\npower at α = %v, %d trials each (values ~1000 ± √1000 per bin, σ_d = √2·√truth):\n", DefaultAlpha, trials)
	fmt.Fprintf(&out, "| disagreement | bins | verdict fails | earlier default | χ² | KS | runs | max-pull |\n| --- | --- | --- | --- | --- | --- | --- | --- |\n")
	rng := rand.New(rand.NewPCG(5, 5))
	power := map[string]float64{}
	for _, sc := range scenarios {
		for _, n := range []int{20, 100, 1000} {
			fails, oldFails := 0, 0
			each := make([]int, len(names))
			for k := 0; k < trials; k++ {
				var sh func(int, float64, float64) float64
				if sc.shift != nil {
					sh = func(i int, truth, sd float64) float64 { return sc.shift(i, n, truth, sd) }
				}
				a, b := pairWith(rng, n, sh)
				r, err := Series(a, b, declared0())
				if err != nil {
					t.Fatal(err)
				}
				if !r.Pass {
					fails++
				}
				// the earlier default: each raw p-value at 0.01, no
				// adjustment, and a raw max |pull| <= 3
				if r.MaxAbsPull > 3 || min(r.PValue, r.KSP, r.RunsP, r.MaxPullP) < DefaultAlpha {
					oldFails++
				}
				for _, c := range r.Criteria {
					for j, nm := range names {
						if c.Name == nm && c.Value <= DefaultAlpha {
							each[j]++
						}
					}
				}
			}
			f := func(k int) string { return fmt.Sprintf("%.3f", float64(k)/float64(trials)) }
			fmt.Fprintf(&out, "| %s | %d | %s | %s | %s | %s | %s | %s |\n", sc.name, n, f(fails), f(oldFails), f(each[0]), f(each[1]), f(each[2]), f(each[3]))
			power[fmt.Sprintf("%s/%d", sc.name, n)] = float64(fails) / float64(trials)
		}
	}
	t.Log(out.String())
	// Sanity on the figures (not their exact values): each disagreement is
	// found almost always where it is large enough to be obvious. (In short
	// mode, 50 trials: the bounds still hold by several binomial errors.)
	for key, min := range map[string]float64{
		"0.5σ global shift/1000": 0.98, "±1σ linear trend/1000": 0.98, "one 5σ bin/20": 0.7, "2 % scale/1000": 0.98,
	} {
		if power[key] < min {
			t.Errorf("power against %s is %.3f, expected at least %v", key, power[key], min)
		}
	}
}
