package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestHolmTable: adjusted p-values worked by hand from the definition in
// Holm (1979), Scand. J. Statist. 6:65 (p̃_(j) = max_{i<=j} min(1,
// (m−i+1)·p_(i))), including ties, the cap at 1 and the running maximum.
func TestHolmTable(t *testing.T) {
	for _, c := range []struct {
		name   string
		p, adj []float64
	}{
		{"empty", nil, []float64{}},
		{"one", []float64{0.03}, []float64{0.03}},
		// sorted 0.005 0.01 0.03 0.04 → 4·0.005, 3·0.01, 2·0.03, max(0.06, 0.04)
		{"four", []float64{0.01, 0.04, 0.03, 0.005}, []float64{0.03, 0.06, 0.06, 0.02}},
		// the running maximum: 3·0.02 = 0.06 > 2·0.021 = 0.042
		{"monotone", []float64{0.021, 0.02, 0.5}, []float64{0.06, 0.06, 0.5}},
		{"ties", []float64{0.01, 0.01, 0.01}, []float64{0.03, 0.03, 0.03}},
		{"cap", []float64{0.4, 0.6, 0.9}, []float64{1, 1, 1}},
		{"ones", []float64{1, 1}, []float64{1, 1}},
		{"zero", []float64{0, 0.2}, []float64{0, 0.2}},
	} {
		got := Holm(c.p)
		if len(got) != len(c.adj) {
			t.Fatalf("%s: %d values, want %d", c.name, len(got), len(c.adj))
		}
		for i := range got {
			if !close(got[i], c.adj[i], 1e-15, 0) {
				t.Errorf("%s: Holm(%v)[%d] = %v, want %v", c.name, c.p, i, got[i], c.adj[i])
			}
		}
	}
}

// TestHolmNaN: the one NaN rule of the project, an undefined p-value never
// passes. A NaN counts as 0: its adjusted value is 0, which is below every
// α, and it still counts in the family's size m.
func TestHolmNaN(t *testing.T) {
	p := []float64{0.02, math.NaN(), 0.5}
	got := Holm(p)
	want := []float64{0.04, 0, 0.5} // sorted 0 (NaN), 0.02, 0.5 → 0, 2·0.02, 0.5
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("Holm(%v)[%d] = %v, want %v", p, i, got[i], want[i])
		}
	}
	for _, alpha := range []float64{1e-12, 0.01, 0.5} {
		if !(got[1] < alpha) {
			t.Errorf("a NaN p-value passes at α = %v: adjusted %v", alpha, got[1])
		}
	}
	if !math.IsNaN(p[1]) {
		t.Error("Holm changed its argument")
	}
}

// TestHolmSequential checks Holm against his procedure as the paper states
// it, written independently of the adjusted p-values: with p sorted,
// reject H_(1), H_(2), … while p_(i) <= α/(m−i+1), and stop at the first
// that is not. The hypotheses rejected must be exactly those with
// p̃ <= α. Fixed seed; p-values with ties and exact multiples of α/k.
func TestHolmSequential(t *testing.T) {
	rng := rand.New(rand.NewPCG(1979, 65))
	for trial := 0; trial < 2000; trial++ {
		m := 1 + rng.IntN(12)
		p := make([]float64, m)
		for i := range p {
			switch rng.IntN(4) {
			case 0:
				p[i] = 0.05 / float64(1+rng.IntN(m)) // on a threshold
			case 1:
				p[i] = rng.Float64() * 0.02
			default:
				p[i] = rng.Float64()
			}
		}
		if m > 1 && rng.IntN(5) == 0 {
			p[1] = p[0] // a tie
		}
		adj := Holm(p)
		for _, alpha := range []float64{0.01, 0.05, 0.2} {
			rejected := sequentialHolm(p, alpha)
			for i := range p {
				if (adj[i] <= alpha) != rejected[i] {
					t.Fatalf("p = %v, α = %v: test %d has adjusted %v but the sequential procedure rejects=%v",
						p, alpha, i, adj[i], rejected[i])
				}
			}
		}
	}
}

// sequentialHolm is the step-down procedure by selection, without sorting
// helpers: at step i (1-based) take the smallest p-value not yet rejected.
func sequentialHolm(p []float64, alpha float64) []bool {
	m := len(p)
	rejected := make([]bool, m)
	for i := 1; i <= m; i++ {
		best := -1
		for j := range p {
			if !rejected[j] && (best < 0 || p[j] < p[best]) {
				best = j
			}
		}
		// the comparison Holm's procedure makes, p_(i) <= α/(m−i+1), in
		// the multiplied form the adjusted p-values use
		if !(float64(m-i+1)*p[best] <= alpha) {
			break
		}
		rejected[best] = true
	}
	return rejected
}
