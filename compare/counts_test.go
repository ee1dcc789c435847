package compare

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"tandem/compare/stats"
	"tandem/compare/table"
)

// countTable builds a table of n unit bins with a count column "n" (and a
// "common" column when common is not nil), rows from line 2 on.
func countTable(name string, counts, common []float64) *table.Table {
	n := len(counts)
	t := &table.Table{Source: name, LoName: "lo", HiName: "hi", Lo: make([]float64, n), Hi: make([]float64, n),
		Names: []string{"n"}, Cols: [][]float64{counts}, FirstLine: 2}
	for i := range n {
		t.Lo[i], t.Hi[i] = float64(i), float64(i+1)
	}
	if common != nil {
		t.Names = append(t.Names, "common")
		t.Cols = append(t.Cols, common)
	}
	return t
}

func countsOpt() Options {
	o := Defaults()
	o.Counts = true
	return o
}

func TestCountTestsPerBin(t *testing.T) {
	a := []float64{3, 0, 10, 5, 0}
	b := []float64{1, 0, 2, 5, 4}
	cs, err := CountTests(CountInput{A: a, B: b}, CountSettings{Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	wantTests := []string{TestBinomial, TestNone, TestBinomial, TestBinomial, TestBinomial}
	for i := range a {
		if cs.BinTests[i] != wantTests[i] {
			t.Errorf("bin %d: test %q, want %q", i+1, cs.BinTests[i], wantTests[i])
		}
		if wantTests[i] == TestNone {
			if !math.IsNaN(cs.BinP[i]) {
				t.Errorf("bin %d: p = %v for a bin without events, want NaN", i+1, cs.BinP[i])
			}
			continue
		}
		if want := stats.BinomTest(int64(a[i]), int64(a[i]+b[i]), 0.5); cs.BinP[i] != want {
			t.Errorf("bin %d: p = %v, want %v", i+1, cs.BinP[i], want)
		}
	}
	if cs.Informative != 4 || cs.MinBin != 2 {
		t.Errorf("informative %d, smallest-p bin %d; want 4 and 2", cs.Informative, cs.MinBin)
	}
	if want := 1 - math.Pow(1-cs.MinP, 4); math.Abs(cs.MinPSidak-want) > 1e-15 {
		t.Errorf("Šidák p = %v, want %v", cs.MinPSidak, want)
	}
	// shared events: McNemar on the discordant counts
	cs, err = CountTests(CountInput{A: []float64{5, 3}, B: []float64{4, 3}, Common: []float64{4, 3}}, CountSettings{})
	if err != nil {
		t.Fatal(err)
	}
	if cs.BinTests[0] != TestMcNemar || cs.OnlyA[0] != 1 || cs.OnlyB[0] != 0 || cs.BinP[0] != stats.McNemar(1, 0) {
		t.Errorf("McNemar bin: %q, discordant %d/%d, p %v", cs.BinTests[0], cs.OnlyA[0], cs.OnlyB[0], cs.BinP[0])
	}
	if cs.BinTests[1] != TestNone || cs.Informative != 1 {
		t.Errorf("a bin with no discordant event: %q, informative %d", cs.BinTests[1], cs.Informative)
	}
}

// TestCountTestsReproducible: one seed gives one result, on any number of
// cores; another seed another Monte Carlo.
func TestCountTestsReproducible(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	a, b := make([]float64, 40), make([]float64, 40)
	for i := range a {
		a[i] = float64(poisson(rng, 2))
		b[i] = float64(poisson(rng, 2))
	}
	in := CountInput{A: a, B: b}
	x, err := CountTests(in, CountSettings{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	old := runtime.GOMAXPROCS(1)
	y, err := CountTests(in, CountSettings{Seed: 3})
	runtime.GOMAXPROCS(old)
	if err != nil {
		t.Fatal(err)
	}
	if x.GP != y.GP || x.PITP != y.PITP {
		t.Errorf("same seed, different results: %v/%v and %v/%v", x.GP, x.PITP, y.GP, y.PITP)
	}
	z, _ := CountTests(in, CountSettings{Seed: 4})
	if z.GP == x.GP && z.PITP == x.PITP {
		t.Errorf("seeds 3 and 4 give the same Monte Carlo and PIT")
	}
}

// TestGMonteCarloExact checks the Monte Carlo p-value of G against its
// exact value, enumerated over every outcome of three small binomials.
func TestGMonteCarloExact(t *testing.T) {
	ns := []int64{3, 5, 2}
	for _, c := range []struct {
		ks []int64
		p0 float64
	}{{[]int64{3, 1, 2}, 0.5}, {[]int64{2, 2, 1}, 0.5}, {[]int64{0, 4, 2}, 0.3}} {
		g := 0.0
		for j := range ns {
			g += gTerm(c.ks[j], ns[j], c.p0)
		}
		exact := 0.0
		for x := int64(0); x <= ns[0]; x++ {
			for y := int64(0); y <= ns[1]; y++ {
				for z := int64(0); z <= ns[2]; z++ {
					gs := gTerm(x, ns[0], c.p0) + gTerm(y, ns[1], c.p0) + gTerm(z, ns[2], c.p0)
					if gs >= g-1e-12*math.Max(g, 1) {
						exact += binom(x, ns[0], c.p0) * binom(y, ns[1], c.p0) * binom(z, ns[2], c.p0)
					}
				}
			}
		}
		const m = 20000
		_, p := gMonteCarlo(c.ks, ns, c.p0, m, 11)
		if se := math.Sqrt(exact * (1 - exact) / m); math.Abs(p-exact) > 4*se+1.0/m {
			t.Errorf("k = %v, p0 = %v: Monte Carlo p %.5f, exact %.5f (error %.5f)", c.ks, c.p0, p, exact, se)
		}
	}
}

func binom(k, n int64, p float64) float64 {
	return distuv.Binomial{N: float64(n), P: p}.Prob(float64(k))
}

// TestCountsRefused: values that are not counts are refused with their
// file and line; bad settings are refused by Validate.
func TestCountsRefused(t *testing.T) {
	for _, c := range []struct {
		a    []float64
		want string
	}{{[]float64{1, -2, 3}, "negative"}, {[]float64{1, 2, 2.5}, "not an integer"}} {
		_, err := Columns(countTable("a.csv", c.a, nil), countTable("b.csv", []float64{1, 1, 1}, nil), []Selection{{Value: "n"}}, countsOpt())
		var te *table.Error
		if !errors.As(err, &te) || te.File != "a.csv" || te.Line == 0 || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%v: got %v, want a table error on a.csv with a line, saying %q", c.a, err, c.want)
		}
	}
	_, err := Columns(countTable("a.csv", []float64{2, 2}, []float64{0, 3}), countTable("b.csv", []float64{2, 2}, nil),
		[]Selection{{Value: "n"}}, func() Options { o := countsOpt(); o.Overlap.Common = "common"; return o }())
	if err == nil || !strings.Contains(err.Error(), "more than either chain") {
		t.Errorf("common > counts: %v", err)
	}
	for _, mod := range []func(*Options){
		func(o *Options) { o.ExposureRatio = -1 },
		func(o *Options) { o.Subset = true },
		func(o *Options) { o.Default = Number(0.5) },
		func(o *Options) { o.MCSamples = -3 },
		func(o *Options) { o.Overlap.Common = "c"; o.ExposureRatio = 2 },
		func(o *Options) { o.Counts = false; o.Seed = 4 },
	} {
		o := countsOpt()
		mod(&o)
		if err := o.Validate(); err == nil {
			t.Errorf("%+v: accepted", o)
		}
	}
}

func TestCountsLike(t *testing.T) {
	sq := func(xs []float64) []float64 {
		out := make([]float64, len(xs))
		for i, x := range xs {
			out[i] = math.Round(math.Sqrt(x)*1000) / 1000 // as a table prints it
		}
		return out
	}
	for _, c := range []struct {
		v    []float64
		s    []float64
		want bool
	}{
		{[]float64{0, 3, 7, 150}, sq([]float64{0, 3, 7, 150}), true},
		{[]float64{30, 40, 50}, sq([]float64{30, 40, 50}), false},              // no sparse bin
		{[]float64{0, 3.5, 7}, sq([]float64{0, 3.5, 7}), false},                // not integers
		{[]float64{0, 3, 7}, []float64{0, 2, 2}, false},                        // not √N
		{[]float64{0, 3, 7}, []float64{1, math.Sqrt(3), math.Sqrt(7)}, true},   // σ = 1 for an empty bin
		{[]float64{-1, 3, 7}, []float64{1, math.Sqrt(3), math.Sqrt(7)}, false}, // negative
		{[]float64{4, 9}, []float64{2.05, 3}, false},                           // beyond rounding
	} {
		if got := CountsLike(c.v, c.s); got != c.want {
			t.Errorf("CountsLike(%v, %v) = %v, want %v", c.v, c.s, got, c.want)
		}
	}
}

// poisson draws from a Poisson distribution (gonum's sampler, on rng).
func poisson(rng *rand.Rand, mu float64) int64 {
	if mu <= 0 {
		return 0
	}
	return int64(distuv.Poisson{Lambda: mu, Src: rng}.Rand())
}

// countPair draws two agreeing count tables of len(mu) bins: with overlap
// fraction f each chain's events are a common part X ~ Poisson(f·μ) and
// its own part ~ Poisson((1-f)·μ) (the "common" column holds X when f > 0).
func countPair(rng *rand.Rand, mu []float64, f float64, scaleB func(i int) float64) (*table.Table, *table.Table) {
	n := len(mu)
	a, b := make([]float64, n), make([]float64, n)
	var c []float64
	if f > 0 {
		c = make([]float64, n)
	}
	for i, m := range mu {
		mb := m
		if scaleB != nil {
			mb = m * scaleB(i)
		}
		x := poisson(rng, f*m)
		a[i] = float64(x + poisson(rng, (1-f)*m))
		b[i] = float64(x + poisson(rng, mb-f*m))
		if c != nil {
			c[i] = float64(x)
		}
	}
	return countTable("a", a, c), countTable("b", b, nil)
}

// minAdjusted is the smallest Holm-adjusted p-value of the results: the
// verdict fails at α exactly when it is <= α (or a check fails).
func minAdjusted(t *testing.T, rs []*Result) float64 {
	t.Helper()
	m := 1.0
	for _, r := range rs {
		for _, c := range r.Criteria {
			switch {
			case c.Kind == KindPValue:
				m = math.Min(m, *c.Adjusted)
			case !c.Pass:
				t.Fatalf("criterion %s failed: %s", c.Name, c.Detail)
			}
		}
	}
	return m
}

// checkRateAt fails when k false alarms in n trials are significantly (one-
// sided, at 0.1 %) more than alpha allows.
func checkRateAt(t *testing.T, what string, k, n int, alpha float64) {
	t.Helper()
	if p := binomialTailAt(k, n, alpha); p < 1e-3 {
		t.Errorf("%s: false-alarm rate %d/%d exceeds α = %v beyond its binomial error (P = %.2g)", what, k, n, alpha, p)
	}
}

func binomialTailAt(k, n int, p float64) float64 {
	if k <= 0 {
		return 1
	}
	return distuv.Binomial{N: float64(n), P: p}.Survival(float64(k) - 0.5)
}

// TestCountsCalibration is the calibration grid of the README's "Count
// data" section: agreeing Poisson tables with a flat mean per bin of 0.1,
// 0.5, 1, 3 and 10, 10 and 100 bins, overlap fractions 0, 0.5 and 0.9; the
// counts verdict (2000 Monte Carlo samples: a valid p-value at any sample
// size) must fail at most at α = 0.01 and 0.05 within the binomial error.
// A pair without any informative event (possible at mean 0.1) cannot be
// compared: its verdict fails on the "informative bins" check, which is a
// refusal rather than a false alarm of a test; such pairs are counted in
// their own column and left out of the rates (which are over the pairs
// that could be compared).
// Fixed seeds; go test -run TestCountsCalibration -v ./compare prints the
// table (-short runs a fifth of the trials).
func TestCountsCalibration(t *testing.T) {
	means := []float64{0.1, 0.5, 1, 3, 10}
	bins := []int{10, 100}
	overlaps := []float64{0, 0.5, 0.9}
	trials := map[int]int{10: 1000, 100: 300}
	if testing.Short() {
		trials = map[int]int{10: 200, 100: 60}
	}
	t.Logf("| bins | mean | overlap | pairs | without an informative event | fail at α = 0.01 | fail at α = 0.05 |")
	t.Logf("| --- | --- | --- | --- | --- | --- | --- |")
	seed := uint64(0)
	for _, nb := range bins {
		for _, f := range overlaps {
			for _, mu := range means {
				seed++
				rng := rand.New(rand.NewPCG(seed, 2026))
				opt := countsOpt()
				opt.MCSamples = 2000
				if f > 0 {
					opt.Overlap.Common = "common"
				}
				m := make([]float64, nb)
				for i := range m {
					m[i] = mu
				}
				n := trials[nb]
				f1, f5, empty := 0, 0, 0
				for k := range n {
					a, b := countPair(rng, m, f, nil)
					opt.Seed = uint64(k)
					rs, err := Columns(a, b, []Selection{{Value: "n"}}, opt)
					if err != nil {
						t.Fatal(err)
					}
					if rs[0].Counts.Informative == 0 {
						empty++
						continue // nothing to compare: the check fails, not a false alarm of a test
					}
					p := minAdjusted(t, rs)
					if p <= 0.01 {
						f1++
					}
					if p <= 0.05 {
						f5++
					}
				}
				what := fmt.Sprintf("%d bins, mean %v, overlap %v", nb, mu, f)
				c := n - empty // pairs that could be compared
				checkRateAt(t, what+" at 0.01", f1, c, 0.01)
				checkRateAt(t, what+" at 0.05", f5, c, 0.05)
				t.Logf("| %d | %v | %v | %d | %d | %.4f ± %.4f | %.4f ± %.4f |", nb, mu, f, n, empty,
					float64(f1)/float64(c), math.Sqrt(0.01*0.99/float64(c)), float64(f5)/float64(c), math.Sqrt(0.05*0.95/float64(c)))
			}
		}
	}
}
