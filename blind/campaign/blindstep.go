package campaign

import (
	"fmt"
	"strconv"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"

	"tandem/blind"
	"tandem/blind/internal/format"
	"tandem/blind/protocol"
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
		for _, t := range todo {
			s := os.Latest[t]
			f, err := c.openSealed(StepBlind, s, ids)
			if err != nil {
				return nil, err
			}
			sc, rel := scope, s.BlindedPath(s.Version)
			if step == StepBlind {
				sc, rel = blind.TeamScope(t), s.OwnPath(s.Version)
			}
			bf, err := c.blindTable(k, f, sc, s.Commitment)
			if err != nil {
				return nil, err
			}
			p.files[rel] = bf.Encode()
			p.data["seal."+t] = fmt.Sprintf("%d %s", s.Version, s.Commitment)
		}
		work = append(work, p)
	}
	var entries []format.Entry
	for _, p := range work {
		digests := map[string]string{}
		for rel, data := range p.files {
			if c.root.Exists(rel) {
				// Left by a blind step that stopped before its ledger entry.
				if err := c.root.Remove(rel); err != nil {
					return res, err
				}
			}
			if err := c.root.CreateExclusive(rel, data, 0o644); err != nil {
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
	crashPoint("blind")
	if err := c.appendEntries(entries, custodian); err != nil {
		return res, err
	}
	return res, nil
}
