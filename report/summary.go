package report

import "tandem/compare"

// Entry is the comparison of one column of one observable between two
// chains.
type Entry struct {
	// Observable names what was measured; in table mode it is set by the
	// caller (by default the file name of the first table).
	Observable string
	// Teams names the two chains compared, in the order A, B; empty in
	// table mode.
	Teams [2]string
	// Unit and Label describe the axis and value, when declared.
	XLabel, YLabel string
	// Blinded says whether the values are blinded.
	Blinded bool
	// Title is the observable's title in words (from the protocol), shown
	// under its name; empty when none was declared.
	Title string
	// Files names the two tables compared (A, B), as the reader gave them;
	// empty when not known.
	Files [2]string
	*compare.Result
}

// Acceptance is a disagreement the parties accepted when signing off.
type Acceptance struct {
	// By lists the parties that accepted it, in signing order.
	By []string `json:"by"`
	// Reason is the reason they gave, in their words.
	Reason string `json:"reason"`
}

// The verdicts of a report, one vocabulary in every format. A comparison
// that was made passes or fails; a campaign adds three states in which
// its overall verdict cannot be pass or fail yet.
const (
	// VerdictPass: every comparison was made and is within tolerance.
	VerdictPass = compare.VerdictPass
	// VerdictFail: a comparison is outside tolerance.
	VerdictFail = compare.VerdictFail
	// VerdictIncomplete: an observable has not been sealed by every team,
	// so its comparisons are missing.
	VerdictIncomplete = "incomplete"
	// VerdictPending: every team sealed, but a seal (a first seal or a
	// re-seal) waits for the custodian's blind step, so the comparison
	// of the latest tables is missing.
	VerdictPending = "pending"
	// VerdictStale: every comparison was made and passes, but a sign-off
	// was made on an earlier state of the campaign.
	VerdictStale = "stale"
)

// Missing is a comparison a campaign cannot make yet.
type Missing struct {
	// Observable names the observable whose comparisons are missing
	// (every column and every pair of teams).
	Observable string
	// Verdict is VerdictIncomplete or VerdictPending.
	Verdict string
	// Reason says why, in words ("not sealed yet by otter").
	Reason string
}

// Summary is a set of comparisons with one overall verdict.
type Summary struct {
	Entries []Entry
	// Teams holds the N-team consistency tests when three or more tables
	// are compared; Entries then hold the pairwise diagnostics.
	Teams []*compare.TeamsResult
	// Title describes what was compared, for reports.
	Title string
	// Campaign names the campaign the comparisons belong to; empty in table
	// mode.
	Campaign string
	// Notes are free-text lines a report shows on top (campaign state,
	// sign-offs).
	Notes []string
	// Accepted lists the disagreements the signing parties accepted;
	// reports show them beside the verdict they qualify.
	Accepted []Acceptance
	// Missing lists the comparisons a campaign cannot make yet; each is a
	// verdict of its own in every report.
	Missing []Missing
	// Stale lists the sign-offs made on an earlier state of the campaign,
	// each as "party: why".
	Stale []string
}

// Pass reports whether every entry passes.
func (s *Summary) Pass() bool {
	for _, t := range s.Teams {
		if !t.Pass {
			return false
		}
	}
	for _, e := range s.Entries {
		if !e.Pass {
			return false
		}
	}
	return true
}

// Complete reports whether every comparison was made and no sign-off is
// stale: only then is the verdict pass or fail.
func (s *Summary) Complete() bool { return len(s.Missing) == 0 && len(s.Stale) == 0 }

// Verdict is the overall verdict: incomplete when an observable is
// missing a team's seal, else pending when a seal waits for the blind
// step, else fail when a comparison fails, else stale when a sign-off is
// stale, else pass.
func (s *Summary) Verdict() string {
	pending := false
	for _, m := range s.Missing {
		if m.Verdict != VerdictPending {
			return VerdictIncomplete
		}
		pending = true
	}
	switch {
	case pending:
		return VerdictPending
	case !s.Pass():
		return VerdictFail
	case len(s.Stale) > 0:
		return VerdictStale
	}
	return VerdictPass
}

// Failures counts the entries that fail.
func (s *Summary) Failures() int {
	n := 0
	for _, t := range s.Teams {
		if !t.Pass {
			n++
		}
	}
	for _, e := range s.Entries {
		if !e.Pass {
			n++
		}
	}
	return n
}

// Sides returns the names of the two chains compared: the team names in a
// campaign, else the result's labels (--label-a, --label-b, by default the
// file names), else "A" and "B".
func (e *Entry) Sides() (string, string) {
	if e.Teams[0] != "" || e.Teams[1] != "" {
		return e.Teams[0], e.Teams[1]
	}
	a, b := "A", "B"
	if e.Result != nil && e.LabelA != "" {
		a = e.LabelA
	}
	if e.Result != nil && e.LabelB != "" {
		b = e.LabelB
	}
	return a, b
}

// Verdict is "pass" or "fail" for one entry.
func (e *Entry) Verdict() string {
	if e.Pass {
		return VerdictPass
	}
	return VerdictFail
}
