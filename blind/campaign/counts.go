package campaign

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"tandem/blind"
	"tandem/blind/internal/format"
	"tandem/blind/protocol"
	"tandem/compare"
	"tandem/compare/table"
)

// CountsPath is the count-tests file the open entry of round r of
// observable o logs; D is the first 12 hex digits of the file's digest.
func CountsPath(o string, round int, digest string) string {
	return "counts/" + o + ".r" + strconv.Itoa(round) + "-" + short(digest) + ".txt"
}

// countsPrefix is the part of CountsPath before the digest.
func countsPrefix(o string, round int) string {
	return "counts/" + o + ".r" + strconv.Itoa(round) + "-"
}

// countsHook, set only by tests, edits the count tests before the open
// entry logs them: a custodian who logs results it did not compute.
var countsHook func(*format.CountsFile)

// hasCounts reports whether an observable has a column compared as counts.
func hasCounts(o *protocol.Observable) bool {
	for i := range o.Columns {
		if o.Columns[i].Counts {
			return true
		}
	}
	return false
}

// PublishP rounds a p-value up to the series 1, 2, 5 × 10^k before it is
// logged: a full-precision exact p-value of a bin, next to the bin's
// published pull, can single out its true counts (SPEC.md, section 7.1).
// Rounding up never makes a comparison fail that would have passed.
// NaN stays NaN; values at or above 1 become 1.
func PublishP(p float64) float64 {
	switch {
	case math.IsNaN(p):
		return p
	case p >= 1:
		return 1
	case p <= 1e-300:
		return 1e-300
	}
	e := int(math.Floor(math.Log10(p))) - 1
	for ; ; e++ {
		for _, m := range []int{1, 2, 5} {
			c, _ := strconv.ParseFloat(strconv.Itoa(m)+"e"+strconv.Itoa(e), 64)
			if c >= p {
				return c
			}
		}
	}
}

// round3 rounds to three significant digits.
func round3(v float64) float64 {
	if math.IsNaN(v) || v == 0 {
		return v
	}
	r, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 3, 64), 64)
	return r
}

// countsBlock is what is logged of one comparison's count tests.
func countsBlock(col, a, b string, cs *compare.CountStats) format.CountsBlock {
	t := format.CountsBlock{Column: col, TeamA: a, TeamB: b, P0: cs.P0, Seed: cs.Seed, Samples: cs.Samples, Informative: cs.Informative,
		G: round3(cs.G), GP: PublishP(cs.GP), PITD: round3(cs.PITD), PITP: PublishP(cs.PITP),
		Runs: cs.Runs, RunsPos: cs.RunsPos, RunsNeg: cs.RunsNeg, RunsP: cs.RunsP,
		MinBin: cs.MinBin, MinP: PublishP(cs.MinP), MinPSidak: PublishP(cs.MinPSidak),
		BinTests: cs.BinTests, BinP: make([]float64, len(cs.BinP))}
	t.MCError = cs.MCError
	if t.MCError > 0 {
		t.MCError = PublishP(t.MCError) // its upper bound: it reveals g-p
	}
	for i, p := range cs.BinP {
		t.BinP[i] = PublishP(p)
	}
	return t
}

// stats turns a logged block back into the count statistics a result
// shows and judges.
func countsStats(t *format.CountsBlock) *compare.CountStats {
	return &compare.CountStats{P0: t.P0, BinTests: t.BinTests, BinP: t.BinP, Informative: t.Informative,
		G: t.G, GP: t.GP, Samples: t.Samples, Seed: t.Seed, MCError: t.MCError, PITD: t.PITD, PITP: t.PITP,
		MinP: t.MinP, MinBin: t.MinBin, MinPSidak: t.MinPSidak, Runs: t.Runs, RunsPos: t.RunsPos, RunsNeg: t.RunsNeg, RunsP: t.RunsP}
}

// countTests runs the count tests of every counts column of o, for every
// pair of teams (pairs, then columns, the comparison digest's order), on
// the true tables, and returns the file the open entry of round logs.
func (c *Campaign) countTests(o *protocol.Observable, round int, seals map[string]*Seal, truth map[string]*table.Table) (*format.CountsFile, error) {
	teams := c.Protocol.Teams()
	f := &format.CountsFile{Campaign: c.Protocol.Campaign, Observable: o.Name, Round: round}
	for _, t := range teams {
		s := seals[t]
		f.Seals = append(f.Seals, format.CountsSeal{Team: t, Version: s.Version, Commitment: s.Commitment})
	}
	for i := 0; i < len(teams); i++ {
		for j := i + 1; j < len(teams); j++ {
			for ci := range o.Columns {
				col := &o.Columns[ci]
				if !col.Counts {
					continue
				}
				opt := col.CompareOptions(c.Protocol.FamilyAlpha())
				a, b := truth[teams[i]], truth[teams[j]]
				cs, err := compare.CountTests(compare.CountInput{A: a.Column(col.Name), B: b.Column(col.Name)},
					compare.CountSettings{ExposureRatio: opt.ExposureRatio, Samples: opt.MCSamples, Seed: opt.Seed})
				if err != nil {
					// the message names a bin and the rule, never a value
					// beyond what the rule says
					return nil, &RefusedError{Step: StepBlind, Problems: []Problem{{Kind: ProblemState, Message: fmt.Sprintf(
						"%s/%s, %s vs %s: the column is declared counts = true, but %s; the team re-seals event counts (non-negative integers)",
						o.Name, col.Name, teams[i], teams[j], redactValue(err.Error()))}}}
				}
				f.Tests = append(f.Tests, countsBlock(col.Name, teams[i], teams[j], cs))
			}
		}
	}
	return f, nil
}

// redactValue keeps the bin of a count-test error and drops the value it
// quotes (a true value is a secret in a blind step).
func redactValue(msg string) string {
	if b, _, ok := strings.Cut(msg, ":"); ok && strings.HasPrefix(b, "bin ") {
		return b + " does not hold an event count"
	}
	return "its counts cannot be tested"
}

// loggedCounts reads the count tests logged at the latest round of an open
// observable, checking them against the round's seals.
func (c *Campaign) loggedCounts(o *protocol.Observable, os *ObservableState) (map[[3]string]*format.CountsBlock, error) {
	if !hasCounts(o) {
		return nil, nil
	}
	refuse := func(path, msg string) error {
		return &RefusedError{Step: "compare", Problems: []Problem{{Kind: ProblemDigest, Path: path, Message: msg}}}
	}
	if len(os.Rounds) == 0 || os.Rounds[len(os.Rounds)-1].Counts == nil {
		return nil, refuse("", fmt.Sprintf("%s has counts columns, but its opening logged no count tests", o.Name))
	}
	r := os.Rounds[len(os.Rounds)-1]
	pub := r.Counts
	data, err := c.root.ReadFile(pub.Path, maxTable)
	if err != nil {
		return nil, table.Errorf(c.Path(pub.Path), 0, 0, "%v", unwrapPath(err))
	}
	if !blind.EqualHex(format.Digest(data), pub.Digest) {
		return nil, refuse(pub.Path, "not the count tests the open entry logged")
	}
	f, err := format.DecodeCountsFile(c.Path(pub.Path), data)
	if err != nil {
		return nil, err
	}
	if f.Campaign != c.Protocol.Campaign || f.Observable != o.Name || f.Round != r.Number {
		return nil, refuse(pub.Path, "names another campaign, observable or round")
	}
	teams := c.Protocol.Teams()
	if len(f.Seals) != len(teams) {
		return nil, refuse(pub.Path, "does not name every team's seal")
	}
	for i, s := range f.Seals {
		l := os.Latest[teams[i]]
		if s.Team != teams[i] || l == nil || s.Version != l.Version || s.Commitment != l.Commitment {
			return nil, refuse(pub.Path, "names other seals than the ones the comparison is open on")
		}
	}
	out := map[[3]string]*format.CountsBlock{}
	for i := range f.Tests {
		t := &f.Tests[i]
		out[[3]string{t.Column, t.TeamA, t.TeamB}] = t
	}
	for i := 0; i < len(teams); i++ {
		for j := i + 1; j < len(teams); j++ {
			for ci := range o.Columns {
				if o.Columns[ci].Counts && out[[3]string{o.Columns[ci].Name, teams[i], teams[j]}] == nil {
					return nil, refuse(pub.Path, fmt.Sprintf("holds no count tests of %s, %s vs %s", o.Columns[ci].Name, teams[i], teams[j]))
				}
			}
		}
	}
	return out, nil
}

// recheckCounts recomputes, after unblinding, the count tests logged at
// the latest round of each open observable from the unblinded true
// tables, with the logged seed, and holds the logged file to them byte for
// byte. It returns one problem per file that differs.
func (c *Campaign) recheckCounts(truth map[Slot]*table.Table) []Problem {
	var probs []Problem
	st := c.State()
	for oi := range c.Protocol.Observables {
		o := &c.Protocol.Observables[oi]
		os := st.Observables[o.Name]
		if !hasCounts(o) || os == nil || len(os.Rounds) == 0 || os.Rounds[len(os.Rounds)-1].Counts == nil {
			continue
		}
		r := os.Rounds[len(os.Rounds)-1]
		tt := map[string]*table.Table{}
		seals := map[string]*Seal{}
		ok := true
		for _, t := range c.Protocol.Teams() {
			tt[t] = truth[Slot{t, o.Name}]
			seals[t] = os.Latest[t]
			if tt[t] == nil || seals[t] == nil || r.Seals[t] != seals[t].Version {
				ok = false
			}
		}
		if !ok {
			continue
		}
		data, err := c.root.ReadFile(r.Counts.Path, maxTable)
		if err != nil {
			continue // bad-digest already says so
		}
		f, err := c.countTests(o, r.Number, seals, tt)
		if err != nil {
			probs = append(probs, Problem{Kind: ProblemCommitment, Path: r.Counts.Path, Message: "the unblinded tables do not hold event counts in a counts column"})
			continue
		}
		if string(f.Encode()) != string(data) {
			probs = append(probs, Problem{Kind: ProblemCommitment, Path: r.Counts.Path,
				Message: "the logged count tests are not those of the unblinded true tables (recomputed with the logged seed)"})
		}
	}
	return probs
}
