package campaign

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"math"

	"gonum.org/v1/gonum/mat"

	"tandem/blind"
	"tandem/blind/internal/format"
	"tandem/blind/protocol"
	"tandem/compare"
	"tandem/compare/table"
	"tandem/report"
)

// Pending is an observable without every team's comparable table.
type Pending struct {
	Observable string `json:"observable"`
	Reason     string `json:"reason"`
}

// Comparison is the campaign's comparison on its blinded (common-map)
// tables, computed once per command.
type Comparison struct {
	Summary *report.Summary
	// Incomplete lists the observables that cannot be compared yet.
	Incomplete []Pending
	// Tables maps each compared slot to the blinded table compared.
	Tables map[Slot]*Published
	// Digest binds the comparison's canonical inputs; see [ComparisonDigest].
	Digest  string
	Verdict Verdict
}

// Compare compares, for every open observable, every pair of teams on
// every declared column of their common-map tables. The result is cached
// for the rest of the command.
func (c *Campaign) Compare() (*Comparison, error) {
	if c.cmp != nil {
		return c.cmp, nil
	}
	st := c.State()
	teams := c.Protocol.Teams()
	cmp := &Comparison{Summary: &report.Summary{Title: "campaign " + c.Protocol.Campaign, Campaign: c.Protocol.Campaign}, Tables: map[Slot]*Published{}}
	for oi := range c.Protocol.Observables {
		o := &c.Protocol.Observables[oi]
		os := st.Observables[o.Name]
		if !os.Open(teams) {
			cmp.Incomplete = append(cmp.Incomplete, Pending{Observable: o.Name, Reason: c.pendingReason(os)})
			continue
		}
		tables := map[string]*table.Table{}
		for _, t := range teams {
			pub := os.Common[t]
			tb, err := c.readBlinded(pub, o)
			if err != nil {
				return nil, err
			}
			tables[t] = tb
			cmp.Tables[Slot{t, o.Name}] = pub
		}
		logged, err := c.loggedCounts(o, os)
		if err != nil {
			return nil, err
		}
		if err := addEntries(cmp.Summary, o, teams, tables, true, logged, c.Protocol.FamilyAlpha()); err != nil {
			return nil, err
		}
	}
	if err := adjustFamily(cmp.Summary, c.Protocol.FamilyAlpha()); err != nil {
		return nil, err
	}
	cmp.Verdict = Verdict(cmp.Summary.Verdict())
	if len(cmp.Incomplete) > 0 {
		cmp.Verdict = Incomplete
	}
	cmp.Digest = ComparisonDigest(c.protocolDigest(), cmp)
	c.cmp = cmp
	return cmp, nil
}

func (c *Campaign) pendingReason(os *ObservableState) string {
	var missing []string
	for _, t := range c.Protocol.Teams() {
		if os.Latest[t] == nil {
			missing = append(missing, t)
		}
	}
	if len(missing) > 0 {
		return "not sealed yet by " + joinAnd(missing)
	}
	return "sealed by every team; the custodian has not opened it yet (tandem blind)"
}

// addEntries compares every pair of teams on every column. On blinded
// tables a counts column shows the pulls of the blinded tables and is
// judged by the count tests logged at the opening (logged, keyed by
// column, team A, team B); true tables are compared as counts directly.
func addEntries(s *report.Summary, o *protocol.Observable, teams []string, tables map[string]*table.Table, blinded bool, logged map[[3]string]*format.CountsBlock, alpha float64) error {
	for i := 0; i < len(teams); i++ {
		for j := i + 1; j < len(teams); j++ {
			a, b := tables[teams[i]], tables[teams[j]]
			for ci := range o.Columns {
				col := &o.Columns[ci]
				opt := col.CompareOptions(alpha)
				if col.Covariance {
					opt.CovA, opt.CovB = covariance(a, col), covariance(b, col)
				}
				var lb *format.CountsBlock
				if col.Counts && blinded {
					lb = logged[[3]string{col.Name, teams[i], teams[j]}]
					// the blinded values are no counts: Gaussian pulls of
					// the blinded tables, for display only
					opt.Counts, opt.ExposureRatio, opt.MCSamples, opt.Seed, opt.SumW2 = false, 0, 0, 0, ""
					// a counts column publishes no uncertainty (SPEC.md
					// 7.1): the blinded differences are shown, without
					// pulls, under a tolerance that never decides
					opt.AbsTol = math.MaxFloat64
				}
				rs, err := compare.Tables(a, b, []table.Selection{col.Selection()}, opt.EdgeTol, opt)
				if err != nil {
					return fmt.Errorf("observable %s, %s vs %s: %w", o.Name, teams[i], teams[j], err)
				}
				if col.Counts && blinded {
					if lb == nil {
						return fmt.Errorf("observable %s, %s vs %s: no count tests logged for column %s", o.Name, teams[i], teams[j], col.Name)
					}
					rs[0].Warnings = []string{"counts: the exact tests ran on the true counts when the comparison opened (the custodian logged them); the p-values are rounded up to 1, 2 or 5 × 10^k; no pulls are shown before unblinding, since a counts column publishes no uncertainty"}
					rs[0].JudgeCounts(countsStats(lb), col.CompareOptions(alpha))
				}
				s.Entries = append(s.Entries, report.Entry{
					Observable: o.Name, Title: o.Title, Teams: [2]string{teams[i], teams[j]},
					XLabel: o.XLabel, YLabel: o.YLabel, Blinded: blinded, Result: rs[0],
				})
			}
		}
	}
	return nil
}

// covariance assembles a column's covariance matrix from its NAME.cov.J
// columns, symmetrised as (V + Vᵀ)/2 (a table's rows are written to the
// shortest round-trip digits, so V_ij and V_ji agree only to rounding).
func covariance(t *table.Table, col *protocol.Column) *mat.SymDense {
	n := t.Len()
	v := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		ci := t.Column(protocol.CovColumn(col.Name, i))
		for j := 0; j <= i; j++ {
			cj := t.Column(protocol.CovColumn(col.Name, j))
			v.SetSym(i, j, (ci[j]+cj[i])/2)
		}
	}
	return v
}

// readBlinded reads a common- or team-map table the ledger records,
// checking its digest.
func (c *Campaign) readBlinded(pub *Published, o *protocol.Observable) (*table.Table, error) {
	data, err := c.root.ReadFile(pub.Path, maxTable)
	if err != nil {
		return nil, table.Errorf(c.Path(pub.Path), 0, 0, "%v", unwrapPath(err))
	}
	if !blind.EqualHex(format.Digest(data), pub.Digest) {
		return nil, &RefusedError{Step: "compare", Problems: []Problem{{Kind: ProblemDigest, Path: pub.Path, Message: "not the blinded table the open entry logged"}}}
	}
	f, err := format.DecodeTableFile(c.Path(pub.Path), data, format.Blinded, o.Edges[0], o.Edges[1])
	if err != nil {
		return nil, err
	}
	return f.Table, nil
}

// ComparisonDigest binds what a comparison was made of, not its rounded
// results: the lowercase hex SHA-256 of
//
//	"tandem/v2 comparison" LF
//	"protocol: " PROTOCOL-DIGEST LF
//	for each compared observable, team pair and column, in protocol order
//	(observables, then pairs i < j of teams in declared order, then columns):
//	  OBSERVABLE SP COLUMN SP TEAM-A SP TEAM-B SP DIGEST-A SP DIGEST-B SP VERDICT LF
//	for each observable that could not be compared:
//	  OBSERVABLE SP "incomplete" LF
//	"verdict: " ("pass" | "fail" | "incomplete") LF
//
// where DIGEST-A and DIGEST-B are the SHA-256 of the two teams' common-map
// blinded table files. The statistics are a function of the protocol and
// these tables, so anyone can recompute them; the digest never depends on
// floating-point rounding.
func ComparisonDigest(protocolDigest string, cmp *Comparison) string {
	h := sha256.New()
	io.WriteString(h, blind.Version+" comparison\nprotocol: "+protocolDigest+"\n")
	for _, e := range cmp.Summary.Entries {
		da := cmp.Tables[Slot{e.Teams[0], e.Observable}].Digest
		db := cmp.Tables[Slot{e.Teams[1], e.Observable}].Digest
		fmt.Fprintf(h, "%s %s %s %s %s %s %s\n", e.Observable, e.Column, e.Teams[0], e.Teams[1], da, db, e.Verdict())
	}
	for _, p := range cmp.Incomplete {
		fmt.Fprintf(h, "%s incomplete\n", p.Observable)
	}
	fmt.Fprintf(h, "verdict: %s\n", cmp.Verdict)
	return hex.EncodeToString(h.Sum(nil))
}

// CompareUnblinded compares the true tables written by unblind.
func (c *Campaign) CompareUnblinded() (*report.Summary, error) {
	if !c.Unblinded() {
		return nil, refuse("compare", ProblemState, "the campaign is not unblinded yet; only blinded tables can be compared")
	}
	s := &report.Summary{Title: "campaign " + c.Protocol.Campaign + ": final (true values)", Campaign: c.Protocol.Campaign}
	teams := c.Protocol.Teams()
	for oi := range c.Protocol.Observables {
		o := &c.Protocol.Observables[oi]
		tables := map[string]*table.Table{}
		for _, t := range teams {
			sl := Slot{t, o.Name}
			rel := sl.UnblindedPath()
			data, err := c.root.ReadFile(rel, maxTable)
			if err != nil {
				return nil, table.Errorf(c.Path(rel), 0, 0, "%v", unwrapPath(err))
			}
			if d := c.State().Files[rel]; !blind.EqualHex(d, format.Digest(data)) {
				return nil, &RefusedError{Step: "compare", Problems: []Problem{{Kind: ProblemDigest, Path: rel, Message: "not the unblinded table the ledger records"}}}
			}
			f, err := format.DecodeTableFile(c.Path(rel), data, format.Unblinded, o.Edges[0], o.Edges[1])
			if err != nil {
				return nil, err
			}
			tables[t] = f.Table
		}
		if err := addEntries(s, o, teams, tables, false, nil, c.Protocol.FamilyAlpha()); err != nil {
			return nil, err
		}
	}
	if err := adjustFamily(s, c.Protocol.FamilyAlpha()); err != nil {
		return nil, err
	}
	return s, nil
}

// adjustFamily holds the family-wise alpha across every observable,
// column and team pair of the campaign (Holm's method, see
// [compare.AdjustFamily]).
func adjustFamily(s *report.Summary, alpha float64) error {
	rs := make([]*compare.Result, len(s.Entries))
	for i := range s.Entries {
		rs[i] = s.Entries[i].Result
	}
	return compare.AdjustFamily(rs, alpha)
}

func joinAnd(s []string) string {
	switch len(s) {
	case 0:
		return ""
	case 1:
		return s[0]
	}
	out := s[0]
	for _, x := range s[1 : len(s)-1] {
		out += ", " + x
	}
	return out + " and " + s[len(s)-1]
}
