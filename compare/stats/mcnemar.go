package stats

// McNemar returns the exact two-sided p-value of McNemar's test on the
// discordant events of two selections that share events: n1 events only the
// first selects, n2 only the second. Under the hypothesis that both select
// alike, n1 given n1 + n2 is Binomial(n1 + n2, ½), so the p-value is
// [BinomTest](n1, n1+n2, ½); with p0 = ½ the binomial is symmetric and this
// is min(1, 2·P(X <= min(n1, n2))). No discordant event gives 1.
//
// (Q. McNemar, Psychometrika 12 (1947) 153; the exact form is the binomial
// test, as in A. Agresti, Categorical Data Analysis, 3rd ed. (2013),
// section 11.1.)
func McNemar(n1, n2 int64) float64 {
	if n1 < 0 || n2 < 0 {
		panic("stats: McNemar needs non-negative counts")
	}
	return BinomTest(n1, n1+n2, 0.5)
}
