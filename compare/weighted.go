package compare

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestWeighted names the per-bin entry of weighted counts: they have no
// exact per-bin test (see [WeightedTest]).
const TestWeighted = "weighted"

// Weighted-count criterion names.
const (
	CritWeightedChi2 = "weighted χ² p-value (Gagunashvili)"
	CritWeightedNorm = "normalisation p-value"
)

// WeightedStats are the tests of two weighted histograms.
type WeightedStats struct {
	// Chi2 and NDF are Gagunashvili's statistic and its degrees of
	// freedom, P its χ² upper tail.
	Chi2 float64 `json:"chi2"`
	NDF  int     `json:"ndf"`
	P    float64 `json:"p_value"`
	// Z and NormP test the totals: Z = (W_A - R W_B)/√(S_A + R² S_B),
	// two-sided normal p-value.
	Z     float64 `json:"norm_z"`
	NormP float64 `json:"norm_p_value"`
	// MinEffective is the smallest effective number of events w²/s² of a
	// bin that holds weight; the tests are asymptotic and want it large.
	MinEffective float64 `json:"min_effective_events"`
}

// WeightedTest compares two weighted histograms given per bin the sum of
// weights w and the sum of squared weights s². The shape is judged by the
// χ² test for two weighted histograms of N. D. Gagunashvili, "Chi-square
// tests for comparing weighted histograms", Nucl. Instrum. Meth. A 614
// (2010) 287:
//
//	X² = Σ_i (W_A w_B,i - W_B w_A,i)² / (W_A² s²_B,i + W_B² s²_A,i)
//
// with W = Σ_i w_i, over the m bins with weight in either histogram,
// asymptotically χ²(m - 1) when both describe the same distribution. It
// leaves the normalisation free (X² does not change when one histogram's
// weights are all scaled), so the totals are tested apart:
//
//	Z = (W_A - R·W_B) / √(S_A + R²·S_B),   S = Σ_i s²_i
//
// two-sided against N(0, 1), with R the exposure ratio (0 means 1). Both are asymptotic: they want many effective
// events w²/s² per bin. With unit weights and equal totals X² is Pearson's
// χ² of the 2×m table, Σ (n_A,i - n_B,i)²/(n_A,i + n_B,i).
//
// Sums of weights must be >= 0 and sums of squares >= 0, positive where
// the weight is.
func WeightedTest(wa, sa, wb, sb []float64, ratio float64) (*WeightedStats, error) {
	if ratio == 0 {
		ratio = 1
	}
	n := len(wa)
	if len(sa) != n || len(wb) != n || len(sb) != n {
		return nil, errors.New("weighted columns do not have one value per bin")
	}
	var WA, WB, SA, SB float64
	for i := range n {
		for _, x := range []struct {
			w, s float64
			side string
		}{{wa[i], sa[i], "A"}, {wb[i], sb[i], "B"}} {
			if !(x.w >= 0) || !(x.s >= 0) || math.IsInf(x.w, 0) || math.IsInf(x.s, 0) {
				return nil, fmt.Errorf("bin %d of %s: sum of weights %v and of squared weights %v must be finite and >= 0", i+1, x.side, x.w, x.s)
			}
			if x.w > 0 && x.s == 0 {
				return nil, fmt.Errorf("bin %d of %s: a sum of weights %v needs a positive sum of squared weights", i+1, x.side, x.w)
			}
		}
		WA, WB, SA, SB = WA+wa[i], WB+wb[i], SA+sa[i], SB+sb[i]
	}
	ws := &WeightedStats{MinEffective: math.Inf(1)}
	nan := math.NaN()
	if WA == 0 || WB == 0 {
		ws.Chi2, ws.P, ws.Z, ws.NormP, ws.MinEffective = nan, nan, nan, nan, nan
		return ws, nil
	}
	m := 0
	for i := range n {
		den := WA*WA*sb[i] + WB*WB*sa[i]
		if den == 0 {
			continue // no weight in either histogram
		}
		m++
		d := WA*wb[i] - WB*wa[i]
		ws.Chi2 += d * d / den
		for _, x := range [][2]float64{{wa[i], sa[i]}, {wb[i], sb[i]}} {
			if x[0] > 0 {
				ws.MinEffective = math.Min(ws.MinEffective, x[0]*x[0]/x[1])
			}
		}
	}
	ws.NDF = m - 1
	ws.P = nan
	if ws.NDF > 0 {
		ws.P = distuv.ChiSquared{K: float64(ws.NDF)}.Survival(ws.Chi2)
	}
	ws.Z = (WA - ratio*WB) / math.Sqrt(SA+ratio*ratio*SB)
	ws.NormP = math.Erfc(math.Abs(ws.Z) / math.Sqrt2)
	return ws, nil
}
