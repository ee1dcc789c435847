package compare

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/stat/distuv"

	"tandem/compare/stats"
)

// Count-data defaults.
const (
	// DefaultMCSamples is the number of Monte Carlo samples of the global
	// count statistic: at a p-value of 0.01 its Monte Carlo error is
	// √(0.01·0.99/10⁴) ≈ 0.001, a tenth of the default α.
	DefaultMCSamples = 10000
	// MaxMCSamples bounds Options.MCSamples.
	MaxMCSamples = 10000000
	// mcBudget bounds bins × samples of one Monte Carlo run; beyond it the
	// number of samples is reduced (never below minMCSamples) and a
	// warning says so. The p-value stays valid at any sample size.
	mcBudget     = 100_000_000
	minMCSamples = 200
	// mcChunk is the number of samples drawn from one random stream, so
	// that the result does not depend on the number of cores.
	mcChunk = 500
	// tableCap bounds the summed size of the per-bin sampling tables;
	// bins beyond it are sampled with distuv.Binomial.
	tableCap = 1 << 22
	// sparseCount is the count below which Gaussian pulls of counts are
	// warned about (see [CountsLike]).
	sparseCount = 20
)

// Per-bin count tests, as [CountStats].BinTests names them.
const (
	TestBinomial = "binomial"
	TestMcNemar  = "McNemar"
	TestNone     = "none"
)

// Count-data criterion names (they replace the χ², KS and largest-pull
// criteria in counts mode; the runs criterion keeps its name).
const (
	CritCountG    = "G p-value (Monte Carlo)"
	CritCountPIT  = "randomized-PIT uniformity p-value"
	CritCountMinP = "smallest bin p-value (Šidák)"
	CritCountBins = "informative bins"
)

// CountInput is one column of event counts of two chains, bin by bin: the
// counts N_A and N_B, and optionally the number of events both chains
// select, N_common (nil when the chains are independent samples). Counts
// are non-negative integers held in float64 (as tables hold them), with
// N_common <= min(N_A, N_B).
type CountInput struct {
	A, B, Common []float64
}

// CountSettings are the settings of the count tests.
type CountSettings struct {
	// ExposureRatio is R = exposure of A / exposure of B; the expected
	// share of A is p0 = R / (1 + R). 0 means 1 (p0 = ½).
	ExposureRatio float64
	// Samples is the number of Monte Carlo samples (0: DefaultMCSamples).
	Samples int
	// Seed seeds the Monte Carlo samples and the PIT's randomization.
	Seed uint64
}

// CountStats are the results of the count tests of one column.
//
// Per bin the informative events are those that can tell the chains apart:
// n_i = N_A + N_B without shared events, and the discordant events
// n_i = (N_A - N_common) + (N_B - N_common) with them; k_i is A's part
// (N_A, or N_A - N_common). Under agreement k_i given n_i is
// Binomial(n_i, p0) (two Poisson counts conditioned on their sum; for
// shared events, McNemar's argument with p0 = ½). A bin with n_i = 0
// carries no information: its test is "none", its p-value NaN, and it
// enters none of the statistics across bins (Informative counts the
// others).
//
// Across bins, all valid for discrete data:
//
//   - G = Σ_i 2[k ln(k/(n p0)) + (n-k) ln((n-k)/(n (1-p0)))] (the
//     likelihood-ratio statistic, 0 ln 0 = 0) with the Monte Carlo
//     p-value (1 + #{G* >= G}) / (M + 1) over M samples of the k_i from
//     their binomials given n_i; this estimate is a valid p-value at any M.
//     MCError is its binomial standard error √(p(1-p)/M).
//   - the randomized probability integral transform of each k_i
//     ([stats.RandomizedPIT]), exactly uniform under agreement, tested for
//     uniformity by the exact Kolmogorov–Smirnov test ([stats.KSUniform]).
//   - the smallest per-bin p-value, trials-corrected by Šidák's rule
//     1 - (1 - p_min)^m over the m informative bins; the per-bin p-values
//     are independent given the n_i and each is super-uniform, so the
//     correction keeps its level.
//   - the runs test on the signs of k_i - n_i p0 (zeros dropped); with
//     p0 = ½ the signs are exchangeable under agreement and the exact runs
//     distribution holds.
type CountStats struct {
	// P0 is the expected share of A, R / (1 + R).
	P0 float64 `json:"p0"`
	// Shared says that per-bin common counts were given (McNemar).
	Shared bool `json:"shared_events"`
	// BinTests names each bin's test (TestBinomial, TestMcNemar or
	// TestNone), BinP its exact two-sided p-value ([stats.BinomTest];
	// NaN for TestNone).
	BinTests []string  `json:"bin_tests"`
	BinP     []float64 `json:"bin_p_values"`
	// OnlyA and OnlyB are the discordant counts N_A - N_common and
	// N_B - N_common, when common counts were given.
	OnlyA []int64 `json:"discordant_a,omitempty"`
	OnlyB []int64 `json:"discordant_b,omitempty"`
	// Informative is the number of bins with n_i > 0.
	Informative int `json:"informative_bins"`
	// G and GP are the likelihood-ratio statistic and its Monte Carlo
	// p-value; Samples, Seed and MCError describe the Monte Carlo.
	G       float64 `json:"g"`
	GP      float64 `json:"g_p_value"`
	Samples int     `json:"mc_samples"`
	Seed    uint64  `json:"mc_seed"`
	MCError float64 `json:"mc_error"`
	// PITD and PITP are the KS statistic and exact p-value of the
	// randomized PIT values.
	PITD float64 `json:"pit_ks_statistic"`
	PITP float64 `json:"pit_p_value"`
	// MinP is the smallest per-bin p-value, MinBin its 0-based bin (-1
	// when no bin is informative), MinPSidak the trials-corrected value.
	MinP      float64 `json:"min_bin_p_value"`
	MinBin    int     `json:"min_bin"`
	MinPSidak float64 `json:"min_bin_p_value_sidak"`
	// Runs statistics of the signs of k_i - n_i p0.
	Runs    int     `json:"runs"`
	RunsPos int     `json:"runs_positive"`
	RunsNeg int     `json:"runs_negative"`
	RunsP   float64 `json:"runs_p_value"`
	// Weighted holds the tests of weighted counts (Options.SumW2); the
	// exact per-bin tests and the statistics above are then not made
	// (bin tests "weighted", p-values NaN).
	Weighted *WeightedStats `json:"weighted,omitempty"`
}

// CountTests runs the count tests on one column of two chains. It does not
// read tables, so a campaign can run it on true counts at the opening;
// [Columns] runs it in counts mode, after checking the counts and locating
// bad values in their files. Counts must be non-negative integers (with
// N_common <= min(N_A, N_B)); anything else is an error naming the bin.
func CountTests(in CountInput, set CountSettings) (*CountStats, error) {
	n := len(in.A)
	if len(in.B) != n || (in.Common != nil && len(in.Common) != n) {
		return nil, errors.New("count columns do not have one value per bin")
	}
	r := set.ExposureRatio
	if r == 0 {
		r = 1
	}
	if !(r > 0) || math.IsInf(r, 0) {
		return nil, fmt.Errorf("exposure ratio must be a finite number > 0, got %v", set.ExposureRatio)
	}
	if set.Samples < 0 || set.Samples > MaxMCSamples {
		return nil, fmt.Errorf("the Monte Carlo sample count must be in [0, %d], got %d", MaxMCSamples, set.Samples)
	}
	p0 := r / (1 + r)
	if in.Common != nil && p0 != 0.5 {
		return nil, errors.New("shared events (McNemar) compare the discordant events with p = ½: an exposure ratio cannot be declared with them")
	}
	cs := &CountStats{P0: p0, Shared: in.Common != nil, BinTests: make([]string, n), BinP: make([]float64, n), MinBin: -1, Seed: set.Seed}
	if cs.Shared {
		cs.OnlyA, cs.OnlyB = make([]int64, n), make([]int64, n)
	}
	ks, ns := make([]int64, 0, n), make([]int64, 0, n)
	for i := range n {
		na, nb := in.A[i], in.B[i]
		nc := 0.0
		if in.Common != nil {
			nc = in.Common[i]
		}
		for _, v := range []float64{na, nb, nc} {
			if !IsCount(v) {
				return nil, fmt.Errorf("bin %d: %v is not an event count (a non-negative integer below 2⁵³)", i+1, v)
			}
		}
		if nc > math.Min(na, nb) {
			return nil, fmt.Errorf("bin %d: %v common events, more than either chain selects (%v and %v)", i+1, nc, na, nb)
		}
		k, m := int64(na-nc), int64(na-nc)+int64(nb-nc)
		if cs.Shared {
			cs.OnlyA[i], cs.OnlyB[i] = k, m-k
		}
		if m == 0 {
			cs.BinTests[i], cs.BinP[i] = TestNone, math.NaN()
			continue
		}
		cs.BinTests[i] = TestBinomial
		if cs.Shared {
			cs.BinTests[i] = TestMcNemar
		}
		cs.BinP[i] = stats.BinomTest(k, m, p0)
		ks, ns = append(ks, k), append(ns, m)
		if cs.MinBin < 0 || cs.BinP[i] < cs.MinP {
			cs.MinP, cs.MinBin = cs.BinP[i], i
		}
	}
	m := len(ks)
	cs.Informative = m
	nan := math.NaN()
	if m == 0 {
		cs.G, cs.GP, cs.MCError, cs.PITD, cs.PITP, cs.MinP, cs.MinPSidak, cs.RunsP = nan, nan, nan, nan, nan, nan, nan, nan
		return cs, nil
	}
	cs.MinPSidak = -math.Expm1(float64(m) * math.Log1p(-cs.MinP))
	if cs.MinP >= 1 {
		cs.MinPSidak = 1
	}
	// PIT: its own stream, one uniform per informative bin in bin order
	pit := rand.New(rand.NewPCG(set.Seed, pitStream))
	u := make([]float64, m)
	dev := make([]float64, m)
	for j := range m {
		u[j] = stats.RandomizedPIT(ks[j], ns[j], p0, pit.Float64())
		dev[j] = float64(ks[j]) - float64(ns[j])*p0
	}
	cs.PITD, cs.PITP = stats.KSUniform(u)
	cs.RunsPos, cs.RunsNeg, cs.Runs = stats.Runs(dev)
	cs.RunsP = stats.RunsPValue(cs.RunsPos, cs.RunsNeg, cs.Runs)
	samples := set.Samples
	if samples == 0 {
		samples = DefaultMCSamples
	}
	if m*samples > mcBudget {
		samples = max(minMCSamples, mcBudget/m)
	}
	cs.Samples = samples
	cs.G, cs.GP = gMonteCarlo(ks, ns, p0, samples, set.Seed)
	cs.MCError = math.Sqrt(cs.GP * (1 - cs.GP) / float64(samples))
	return cs, nil
}

// Random streams of one seed (the second PCG word).
const (
	pitStream = 0x7069742d73747265 // "pit-stre"
	mcStream  = 0x6d632d73747265   // "mc-stre", plus the chunk number
)

// IsCount reports whether v is a non-negative integer that float64 holds
// exactly (below 2⁵³).
func IsCount(v float64) bool {
	return v >= 0 && v < 1<<53 && v == math.Trunc(v)
}

// gTerm is bin's contribution 2[k ln(k/(n p)) + (n-k) ln((n-k)/(n q))].
func gTerm(k, n int64, p float64) float64 {
	g := 0.0
	if k > 0 {
		g += float64(k) * math.Log(float64(k)/(float64(n)*p))
	}
	if k < n {
		g += float64(n-k) * math.Log(float64(n-k)/(float64(n)*(1-p)))
	}
	return math.Max(0, 2*g)
}

// sampler draws k ~ Binomial(n, p) of one bin: from a table of the CDF
// over k in [lo, lo+len(cdf)), covering n·p ± 12 standard deviations
// (outside, the probability is below 10⁻³²), with the G term of each k;
// or, past the table budget, from distuv.Binomial.
type sampler struct {
	lo   int64
	cdf  []float64
	g    []float64
	n    int64
	p    float64
	wide bool
}

func newSampler(n int64, p float64, budget *int) sampler {
	s := sampler{n: n, p: p}
	mean, sd := float64(n)*p, math.Sqrt(float64(n)*p*(1-p))
	lo := max(0, int64(math.Floor(mean-12*sd))-1)
	hi := min(n, int64(math.Ceil(mean+12*sd))+1)
	w := int(hi - lo + 1)
	if w > *budget {
		s.wide = true
		return s
	}
	*budget -= w
	s.lo = lo
	s.cdf, s.g = make([]float64, w), make([]float64, w)
	b := distuv.Binomial{N: float64(n), P: p}
	acc := 0.0
	if lo > 0 {
		acc = b.CDF(float64(lo - 1))
	}
	for j := range w {
		k := lo + int64(j)
		acc += b.Prob(float64(k))
		s.cdf[j] = acc
		s.g[j] = gTerm(k, n, p)
	}
	s.cdf[w-1] = math.Inf(1) // the table ends every draw
	return s
}

// draw returns the G term of one draw.
func (s *sampler) draw(rng *rand.Rand) float64 {
	if s.wide {
		b := distuv.Binomial{N: float64(s.n), P: s.p, Src: rng}
		return gTerm(int64(b.Rand()), s.n, s.p)
	}
	u := rng.Float64()
	// first j with cdf[j] > u
	lo, hi := 0, len(s.cdf)-1
	for lo < hi {
		mid := int(uint(lo+hi) >> 1)
		if s.cdf[mid] > u {
			hi = mid
		} else {
			lo = mid + 1
		}
	}
	return s.g[lo]
}

// gMonteCarlo returns G and its Monte Carlo p-value. Samples are drawn in
// chunks of mcChunk, chunk c from the stream PCG(seed, mcStream + c), so
// the result is the same on any number of cores.
func gMonteCarlo(ks, ns []int64, p0 float64, samples int, seed uint64) (float64, float64) {
	g := 0.0
	for j := range ks {
		g += gTerm(ks[j], ns[j], p0)
	}
	budget := tableCap
	ss := make([]sampler, len(ks))
	for j := range ks {
		ss[j] = newSampler(ns[j], p0, &budget)
	}
	// G* >= G up to rounding of the sum: equal configurations give equal
	// sums, and a relative 1e-12 absorbs a different summation of equal
	// terms
	limit := g - 1e-12*math.Max(g, 1)
	chunks := (samples + mcChunk - 1) / mcChunk
	counts := make([]int, chunks)
	var wg sync.WaitGroup
	next := make(chan int, chunks)
	for c := range chunks {
		next <- c
	}
	close(next)
	for range min(runtime.GOMAXPROCS(0), chunks) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for c := range next {
				rng := rand.New(rand.NewPCG(seed, mcStream+uint64(c)))
				todo := min(mcChunk, samples-c*mcChunk)
				// bin by bin over the chunk's samples: each bin's table
				// stays in cache
				gs := make([]float64, todo)
				for j := range ss {
					for i := range gs {
						gs[i] += ss[j].draw(rng)
					}
				}
				hits := 0
				for _, x := range gs {
					if x >= limit {
						hits++
					}
				}
				counts[c] = hits
			}
		}()
	}
	wg.Wait()
	hits := 0
	for _, h := range counts {
		hits += h
	}
	return g, float64(1+hits) / float64(samples+1)
}
