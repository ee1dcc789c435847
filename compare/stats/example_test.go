package stats_test

import (
	"fmt"

	"tandem/compare/stats"
)

// The two-sided one-sample KS test at n = 10: Miller's table (J. Amer.
// Statist. Assoc. 51 (1956) 111) gives 0.409 as the 5 % critical value of
// D, so its exact p-value lies close to 0.05 (the table is rounded to three
// digits; value quoted from memory of the published table).
func ExampleKSPValue() {
	fmt.Printf("p(D ≥ 0.409 | n = 10) = %.3f\n", stats.KSPValue(10, 0.409))
	// Output:
	// p(D ≥ 0.409 | n = 10) = 0.050
}

// Signs of ten differences that drift from positive to negative: the runs
// test counts the two signs and the runs, and gives the exact probability
// of this few runs or fewer. With 5 + 5 signs in 2 runs it is
// 2/C(10,5) = 2/252 (the only two sequences with two runs).
func ExampleRunsPValue() {
	d := []float64{0.4, 1.2, 0.3, 0.8, 0.1, -0.2, -0.9, -0.5, -1.1, -0.3}
	n1, n2, r := stats.Runs(d)
	fmt.Printf("%d positive, %d negative, %d runs, p = %.5f (2/252 = %.5f)\n", n1, n2, r, stats.RunsPValue(n1, n2, r), 2.0/252)
	// Output:
	// 5 positive, 5 negative, 2 runs, p = 0.00794 (2/252 = 0.00794)
}

// Four p-values adjusted by Holm's method (Holm 1979): sorted 0.005, 0.01,
// 0.03, 0.04 are multiplied by 4, 3, 2, 1 and made non-decreasing, so at
// α = 0.05 the first two are rejected and the last two are not (worked by
// hand). A NaN would count as 0: an undefined p-value never passes.
func ExampleHolm() {
	adj := stats.Holm([]float64{0.01, 0.04, 0.03, 0.005})
	fmt.Printf("%.3g\n", adj)
	// Output:
	// [0.03 0.06 0.06 0.02]
}

// A step that kept 45 of 50 events: the 68.27 % Clopper–Pearson interval
// (Clopper and Pearson 1934) around 0.9; scipy 1.10.1 gives the same
// four digits with binomtest(45, 50).proportion_ci(0.6827, method='exact').
func ExampleClopperPearson() {
	lo, hi := stats.ClopperPearson(45, 50, 0.6827)
	fmt.Printf("0.9 in [%.4f, %.4f]\n", lo, hi)
	// Output:
	// 0.9 in [0.8380, 0.9425]
}
