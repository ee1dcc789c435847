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
