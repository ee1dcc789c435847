package campaign

import (
	"fmt"
	"math"
	"strconv"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"

	"tandem/blind"
	"tandem/blind/audit"
	"tandem/blind/internal/format"
	"tandem/blind/protocol"
	"tandem/compare/table"
)

// Published tables of one blind step.
type BlindResult struct {
	// Files lists the blinded tables written, campaign-relative.
	Files []string
	// Opened names the observables whose comparison opened (every team's
	// table published in the common map).
	Opened []string
	// Waiting names the observables published in team maps only, and the
	// teams still to seal them.
	Waiting map[string][]string
	// Risks lists the attacks that broke a column whose protocol accepts
	// that risk (published anyway, with the protocol's reason).
	Risks []audit.Finding
}

type pending struct {
	step  Step
	obs   string
	files map[string][]byte
	data  map[string]string
}

// Blind opens K and every sealed table not yet published, and publishes
// them, signed with the custodian's key. For an observable that every team
// has sealed, every team's latest table is published in the common map
// and the comparison opens (an "open" entry). Otherwise each newly sealed
// table is published in its team's own map (a "blind" entry), which the
// team can inspect but nobody can compare with another team's. Everything
// is computed and checked before anything is written.
func (c *Campaign) Blind(ids []age.Identity, custodian ssh.Signer) (*BlindResult, error) {
	unlock, err := c.begin(StepBlind)
	if err != nil {
		return nil, err
	}
	defer unlock()
	k, err := c.openKey(StepBlind, ids)
	if err != nil {
		return nil, err
	}
	st := c.State()
	teams := c.Protocol.Teams()
	res := &BlindResult{Waiting: map[string][]string{}}
	var work []pending
	var cols []audit.Column
	for _, o := range c.Protocol.Observables {
		os := st.Observables[o.Name]
		step, scope := StepBlind, ""
		var todo []string
		switch {
		case os.Open(teams):
			continue
		case os.Sealed(teams):
			step, scope, todo = StepOpen, blind.CommonScope, teams
		default:
			for _, t := range teams {
				if l := os.Latest[t]; l == nil {
					res.Waiting[o.Name] = append(res.Waiting[o.Name], t)
				} else if own := os.Own[t]; own == nil || own.Version != l.Version {
					todo = append(todo, t)
				}
			}
		}
		if len(todo) == 0 {
			continue
		}
		p := pending{step: step, obs: o.Name, files: map[string][]byte{}, data: map[string]string{"observable": o.Name}}
		if step == StepOpen {
			p.data["round"] = strconv.Itoa(os.Round() + 1)
		}
		truth := map[string]*table.Table{}
		for _, t := range todo {
			s := os.Latest[t]
			f, err := c.openSealed(StepBlind, s, ids)
			if err != nil {
				return nil, err
			}
			truth[t] = f.Table
			sc, rel := scope, s.BlindedPath(s.Version, s.Commitment)
			if step == StepBlind {
				sc, rel = blind.TeamScope(t), s.OwnPath(s.Version, s.Commitment)
			}
			bf, err := c.blindTable(k, f, sc, s.Commitment)
			if err != nil {
				return nil, err
			}
			cols = append(cols, auditColumns(&o, f, bf)...)
			p.data["seal."+t] = fmt.Sprintf("%d %s", s.Version, s.Commitment)
			if _, done := st.Files[rel]; !done {
				// a table is published once; a later round names it only
				p.files[rel] = bf.Encode()
			}
		}
		if step == StepOpen && hasCounts(&o) {
			// the count tests run on the true counts, here, and only
			// their (rounded) results are published
			cf, err := c.countTests(&o, os.Round()+1, os.Latest, truth)
			if err != nil {
				return nil, err
			}
			if countsHook != nil {
				countsHook(cf)
			}
			data := cf.Encode()
			p.files[CountsPath(o.Name, os.Round()+1, format.Digest(data))] = data
		}
		work = append(work, p)
	}
	if probs := c.judgeAudit(cols, res); len(probs) > 0 {
		return nil, &RefusedError{Step: StepBlind, Problems: probs}
	}
	var entries []format.Entry
	files := c.root.batch()
	for _, p := range work {
		digests := map[string]string{}
		for rel, data := range p.files {
			if c.root.Exists(rel) {
				// Left by a blind step that stopped before its ledger entry.
				if err := c.root.Remove(rel); err != nil {
					return res, err
				}
			}
			if err := files.CreateExclusive(rel, data, 0o644); err != nil {
				return res, err
			}
			digests[rel] = format.Digest(data)
			res.Files = append(res.Files, rel)
		}
		entries = append(entries, format.Entry{Step: string(p.step), Actor: protocol.RoleCustodian, Files: digests, Data: p.data})
		if p.step == StepOpen {
			res.Opened = append(res.Opened, p.obs)
		}
	}
	// the entries make the files official: only once they are durable
	if err := files.sync(); err != nil {
		return res, err
	}
	crashPoint("blind")
	if err := c.appendEntries(entries, custodian); err != nil {
		return res, err
	}
	return res, nil
}

// auditColumns describes every blinded column of a table for the attack
// battery: what an outsider sees next to the true values.
func auditColumns(o *protocol.Observable, truth, blinded *format.TableFile) []audit.Column {
	var out []audit.Column
	for ci := range o.Columns {
		col := &o.Columns[ci]
		ac := audit.Column{Observable: o.Name, Column: col.Name, Lo: truth.Table.Lo, Hi: truth.Table.Hi,
			True: truth.Table.Column(col.Name), Blinded: blinded.Table.Column(col.Name),
			Scale: [2]float64{col.Scale[0], col.Scale[1]}, Shift: [2]float64{col.Shift[0], col.Shift[1]}}
		for _, e := range col.Errors {
			ac.BlindedErr = append(ac.BlindedErr, blinded.Table.Column(e))
		}
		if col.Covariance {
			// the published diagonal is σ'_i² as well
			diag := make([]float64, truth.Table.Len())
			for i := range diag {
				diag[i] = math.Sqrt(math.Abs(blinded.Table.Column(protocol.CovColumn(col.Name, i))[i]))
			}
			ac.BlindedErr = append(ac.BlindedErr, diag)
		}
		out = append(out, ac)
	}
	return out
}

// judgeAudit runs the attack battery on everything a blind step is about
// to publish and refuses a column an attack breaks, unless the protocol
// accepts that risk for the column (then the finding is kept in res).
func (c *Campaign) judgeAudit(cols []audit.Column, res *BlindResult) []Problem {
	var probs []Problem
	seen := map[string]bool{}
	// Every observable and column has maps of its own (its name is in the
	// HKDF info), so the ratio attack between columns can only gain
	// within one observable's table: audit observable by observable,
	// which keeps the cost linear in the number of observables.
	var findings []audit.Finding
	for start := 0; start < len(cols); {
		end := start + 1
		for end < len(cols) && cols[end].Observable == cols[start].Observable {
			end++
		}
		findings = append(findings, audit.Run(cols[start:end], audit.DefaultThreshold)...)
		start = end
	}
	for _, f := range findings {
		if !f.Broken {
			continue
		}
		key := f.Observable + "/" + f.Column + "/" + f.Attack
		if seen[key] {
			continue // the same attack on another team's table of the column
		}
		seen[key] = true
		o := c.Protocol.Observable(f.Observable)
		var col *protocol.Column
		if o != nil {
			col = o.Column(f.Column)
		}
		if col != nil && col.AcceptRisk != "" {
			res.Risks = append(res.Risks, f)
			continue
		}
		detail := ""
		if f.Detail != "" {
			detail = " (" + f.Detail + ")"
		}
		probs = append(probs, Problem{Kind: ProblemState, Message: fmt.Sprintf(
			"%s/%s: the %s attack recovers the true values to %.3g of the blinding range%s, below the %.2g the blind step accepts; widen the shift range, or accept the risk in the protocol with accept_risk = \"reason\"",
			f.Observable, f.Column, f.Attack, f.Precision, detail, audit.DefaultThreshold)})
	}
	return probs
}
