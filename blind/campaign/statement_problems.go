package campaign

// Problem kinds added with the statement's compared lines (SPEC.md
// sections 8, 9 and 11). They belong with the others in campaign.go; they
// live here because that file has another owner for now.
const (
	// ProblemSecondInit is an init entry after the first entry.
	ProblemSecondInit ProblemKind = "second-init"
	// ProblemComparison is a sign-off whose compared lines (each
	// comparison with its verdict) are not the comparisons recomputed
	// from the campaign's blinded tables.
	ProblemComparison ProblemKind = "comparison-mismatch"
)
