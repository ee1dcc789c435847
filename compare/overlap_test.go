package compare

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"tandem/compare/table"
)

// TestOverlapPoisson simulates two chains selecting overlapping events
// (fixed seed): per bin N_A = X + Y and N_B = X + Z with X, Y, Z
// independent Poisson counts, X the common events, so the true correlation
// of N_A and N_B is E[X]/√(E[N_A] E[N_B]) = 0.6. With ρ derived from the
// overlap, the pulls have unit width within its error and the χ²
// p-values are uniform; with ρ = 0 the width is √(1 - 0.6) ≈ 0.63.
func TestOverlapPoisson(t *testing.T) {
	const bins, trials, common = 40, 500, 0.6
	src := rand.NewPCG(10, 10)
	var withOv, without []float64
	var ps []float64
	for k := 0; k < trials; k++ {
		a, b := overlapPair(src, bins, common)
		ov := Defaults()
		ov.Overlap = Overlap{Count: "n", Common: "n_common"}
		rs, err := Columns(a, b, []Selection{{Value: "y", Errors: []string{"stat"}}}, ov)
		if err != nil {
			t.Fatal(err)
		}
		withOv = append(withOv, rs[0].Pulls...)
		ps = append(ps, rs[0].PValue)
		for _, w := range rs[0].Warnings {
			if w[:11] == "correlation" {
				t.Fatalf("the overlap declares the correlation, yet: %s", w)
			}
		}
		if s := rs[0].Sources[0]; s.PerBin == "" || math.Abs(s.Rho-common) > 0.05 {
			t.Fatalf("source %+v: mean ρ should be about %v", s, common)
		}
		rs, err = Columns(a, b, []Selection{{Value: "y", Errors: []string{"stat"}}}, declared0())
		if err != nil {
			t.Fatal(err)
		}
		without = append(without, rs[0].Pulls...)
	}
	w1, w0 := width(withOv), width(without)
	errW := 1 / math.Sqrt(2*float64(len(withOv)-1))
	if math.Abs(w1-1) > 4*errW {
		t.Errorf("pull width with the overlap ρ is %.4f ± %.4f, want 1", w1, errW)
	}
	if math.Abs(w0-math.Sqrt(1-common)) > 0.02 {
		t.Errorf("pull width with ρ = 0 is %.4f, want about %.3f", w0, math.Sqrt(1-common))
	}
	counts := make([]float64, 10)
	for _, p := range ps {
		counts[min(int(p*10), 9)]++
	}
	stat := 0.0
	for _, c := range counts {
		stat += (c - trials/10.0) * (c - trials/10.0) / (trials / 10.0)
	}
	if p := (distuv.ChiSquared{K: 9}).Survival(stat); p < 1e-3 {
		t.Errorf("χ² p-values with the overlap ρ are not uniform: deciles %v (gof p = %.3g)", counts, p)
	}
	t.Logf("pull width: %.4f with the overlap ρ, %.4f with ρ = 0 (%d pulls)", w1, w0, len(withOv))
}

func overlapPair(src rand.Source, bins int, common float64) (*table.Table, *table.Table) {
	mk := func(name string, cols int) *table.Table {
		t := &table.Table{Source: name, Lo: make([]float64, bins), Hi: make([]float64, bins),
			Names: []string{"y", "stat", "n", "n_common"}[:cols]}
		for range cols {
			t.Cols = append(t.Cols, make([]float64, bins))
		}
		return t
	}
	a, b := mk("a.csv", 4), mk("b.csv", 3)
	for i := 0; i < bins; i++ {
		mu := 400 * math.Exp(-float64(i)/float64(bins))
		x := distuv.Poisson{Lambda: common * mu, Src: src}.Rand()
		y := distuv.Poisson{Lambda: (1 - common) * mu, Src: src}.Rand()
		z := distuv.Poisson{Lambda: (1 - common) * mu, Src: src}.Rand()
		for _, s := range []struct {
			t *table.Table
			n float64
		}{{a, x + y}, {b, x + z}} {
			s.t.Lo[i], s.t.Hi[i] = float64(i), float64(i+1)
			s.t.Cols[0][i], s.t.Cols[1][i], s.t.Cols[2][i] = s.n, math.Sqrt(s.n), s.n
		}
		a.Cols[3][i] = x
	}
	return a, b
}

func width(xs []float64) float64 {
	m := 0.0
	for _, x := range xs {
		m += x
	}
	m /= float64(len(xs))
	ss := 0.0
	for _, x := range xs {
		ss += (x - m) * (x - m)
	}
	return math.Sqrt(ss / float64(len(xs)-1))
}
