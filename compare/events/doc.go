// Package events synchronises two analysis chains at the event level: it
// matches the events of two tables by their key columns (for example run
// and event number), compares every per-event variable of the common
// events within a per-variable tolerance, compares the two cut flows with
// McNemar's exact test on the discordant events, and counts the events of
// each bin of a binned observable that both chains select, which sets the
// correlation of their statistical errors.
//
// Tables are read as streams of [Batch]es through the [Source] interface
// (CSV/TSV here, Parquet in events/parquet, ROOT trees through
// [TreeFuncs]). When both tables are sorted by key, the two streams are
// merged in one pass with memory independent of the event count. When they
// are not, the rows are hash-partitioned on the key, spilled to a temporary
// folder when they exceed a memory budget, and each partition is sorted
// and merged on its own; the temporary folder is removed afterwards.
//
// Everything a run learns is kept in a [Summary] whose parts add exactly:
// counts, discordant counts, histograms with fixed edges, maxima and the
// lists of the worst events. Summaries of partitions of the data (for
// example run ranges) therefore [Merge] into the summary of the whole.
//
// # Agreement of one variable
//
// For a common event with values a and b, the difference d = a − b is
// within tolerance when
//
//	|d| <= max(ABS, REL · max(|a|, |b|))
//
// Two NaNs agree, and so do two equal infinities; one NaN never agrees.
// The relative difference shown in reports and histograms is
//
//	r = |d| / max(|a|, |b|)      (0 when a = b)
//
// # Cut flow
//
// Cuts are applied in order; step k keeps an event when it passes cuts
// 1…k. Among the common events, n_AB passes step k in both chains, n_A¬B
// only in A and n_B¬A only in B. Under the hypothesis that the chains keep
// events alike, each discordant event is equally likely to be either kind
// (McNemar 1947), so the exact two-sided p-value is that of the binomial
// test of n_A¬B successes in n_A¬B + n_B¬A trials with p = 1/2
// ([stats.McNemar]), Holm-adjusted over the steps ([stats.Holm]). Per-chain
// step efficiencies have Clopper–Pearson intervals (Clopper and Pearson
// 1934; [stats.ClopperPearson]).
package events
