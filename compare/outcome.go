package compare

// The two verdicts of a comparison that was made. Reports add the
// campaign's states in which no verdict can be given yet (see package
// report).
const (
	// VerdictPass: the comparison is within tolerance.
	VerdictPass = "pass"
	// VerdictFail: the comparison is outside tolerance.
	VerdictFail = "fail"
)

func verdict(ok bool) string {
	if ok {
		return VerdictPass
	}
	return VerdictFail
}
