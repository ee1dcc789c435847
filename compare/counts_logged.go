package compare

// JudgeCounts makes r a count-data result whose tests were run elsewhere:
// a campaign's custodian runs [CountTests] on the true counts when it
// opens a comparison, and everyone else sees only the blinded tables,
// whose pulls r holds. The Gaussian criteria of r are replaced by the
// count criteria of cs, judged with opt's α and tolerances, as [Columns]
// does in counts mode; the p-value criteria are not adjusted yet
// ([AdjustFamily]).
func (r *Result) JudgeCounts(cs *CountStats, opt Options) {
	r.Counts = cs
	r.judgeCounts(opt.effective())
}
