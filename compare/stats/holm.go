package stats

import (
	"cmp"
	"math"
	"slices"
)

// Holm returns Holm's step-down adjusted p-values of a family of m tests
// (S. Holm, "A simple sequentially rejective multiple test procedure",
// Scand. J. Statist. 6 (1979) 65–70). With the p-values sorted,
// p_(1) <= … <= p_(m), the adjusted p-values are
//
//	p̃_(j) = max_{i<=j} min(1, (m − i + 1)·p_(i))
//
// and rejecting every hypothesis with p̃ <= α keeps the probability of any
// false rejection at most α, whatever the dependence between the tests.
// The result is in the order of p; p is not changed.
//
// An undefined p-value never passes: a NaN counts as 0, so its adjusted
// value is 0 and it takes its place in the family like any other test.
func Holm(p []float64) []float64 {
	m := len(p)
	val := func(i int) float64 {
		if math.IsNaN(p[i]) {
			return 0
		}
		return p[i]
	}
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(x, y int) int { return cmp.Compare(val(x), val(y)) })
	out := make([]float64, m)
	run := 0.0
	for j, i := range idx {
		run = math.Max(run, math.Min(1, float64(m-j)*val(i)))
		out[i] = run
	}
	return out
}
