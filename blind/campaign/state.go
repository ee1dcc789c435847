package campaign

import (
	"fmt"
	"strconv"
	"strings"

	"tandem/blind/internal/format"
	"tandem/blind/protocol"
)

// Slot is one team's table of one observable.
type Slot struct{ Team, Observable string }

func (s Slot) String() string { return s.Team + "/" + s.Observable }

// SealedPath is the file of one sealed version; versions never overwrite
// each other.
func (s Slot) SealedPath(v int) string {
	return "sealed/" + s.Team + "/" + s.Observable + ".v" + strconv.Itoa(v) + ".age"
}

// OwnPath is the team-map blinded table of one version.
func (s Slot) OwnPath(v int) string {
	return "blinded/" + s.Team + "/" + s.Observable + ".v" + strconv.Itoa(v) + ".own.csv"
}

// BlindedPath is the common-map blinded table of one version.
func (s Slot) BlindedPath(v int) string {
	return "blinded/" + s.Team + "/" + s.Observable + ".v" + strconv.Itoa(v) + ".csv"
}

// UnblindedPath is the true table written by unblind.
func (s Slot) UnblindedPath() string { return "unblinded/" + s.Team + "/" + s.Observable + ".csv" }

// SignoffPaths are the files of a party's n-th sign-off.
func SignoffPaths(party string, n int) (statement, sig string) {
	base := fmt.Sprintf("signoffs/%s.%d.statement", party, n)
	return base, base + ".sig"
}

// Seal is one sealed version of a slot, as the ledger records it.
type Seal struct {
	Slot
	Version    int
	Commitment string
	Path       string
	Digest     string
	Seq        int
	Reason     string
	// AfterRound is the number of the round of this observable that had
	// opened before this seal (0: none), so a revision is visible.
	AfterRound int
}

// Published is a blinded table the ledger records.
type Published struct {
	Path, Digest string
	Version      int
	Seq          int
}

// Round is one opening of an observable: the seals whose tables were
// published in the common map at ledger entry Seq.
type Round struct {
	Number int
	Seq    int
	Seals  map[string]int // team → version
}

// ObservableState is what the ledger says about one observable.
type ObservableState struct {
	Name string
	// The maps are nil until the ledger sets an entry.
	Latest map[string]*Seal      // team → latest seal
	Own    map[string]*Published // team → team-map table of its latest seal
	Common map[string]*Published // team → common-map table of its latest seal
	Rounds []Round
	// Revisions are the seals made after a round had opened.
	Revisions []*Seal
}

// Sealed reports whether every team has sealed.
func (o *ObservableState) Sealed(teams []string) bool {
	for _, t := range teams {
		if o.Latest[t] == nil {
			return false
		}
	}
	return true
}

// Open reports whether the comparison is open on every team's latest seal.
func (o *ObservableState) Open(teams []string) bool {
	if !o.Sealed(teams) {
		return false
	}
	for _, t := range teams {
		if p := o.Common[t]; p == nil || p.Version != o.Latest[t].Version {
			return false
		}
	}
	return true
}

// Round returns the number of the latest round, 0 before the first opening.
func (o *ObservableState) Round() int { return len(o.Rounds) }

// SignEntry is a party's latest sign-off in the ledger.
type SignEntry struct {
	Party         string
	N             int
	Seq           int
	Statement     string
	Sig           string
	Verdict       string
	Accepted      string
	StatementHash string
}

// State is the ledger replayed once.
type State struct {
	Observables map[string]*ObservableState
	Signs       map[string]*SignEntry
	Amends      []format.Entry
	Unblind     *format.Entry
	// LastChange is the sequence number of the latest seal, open or amend:
	// a sign-off made before it is stale.
	LastChange int
	// Files maps every file the ledger covers to its latest digest.
	Files map[string]string
	// Problems are entries out of the allowed order or by the wrong actor.
	Problems []Problem
	salt     []byte
	keyCom   string
}

// State replays the ledger (once per Campaign).
func (c *Campaign) State() *State {
	if c.state == nil {
		c.state = c.replay()
	}
	return c.state
}

func (c *Campaign) replay() *State {
	p := c.Protocol
	st := &State{Observables: make(map[string]*ObservableState, len(p.Observables)), Signs: map[string]*SignEntry{}, Files: make(map[string]string, len(c.Ledger))}
	// the maps of an observable are made when first written (a nil map
	// reads as empty)
	all := make([]ObservableState, len(p.Observables))
	for i, o := range p.Observables {
		all[i].Name = o.Name
		st.Observables[o.Name] = &all[i]
	}
	bad := func(e *format.Entry, kind ProblemKind, f string, a ...any) {
		st.Problems = append(st.Problems, Problem{Kind: kind, Path: LedgerFile, Party: e.Actor, Message: fmt.Sprintf("entry %d (%s by %s): ", e.Seq, e.Step, e.Actor) + fmt.Sprintf(f, a...)})
	}
	teams := p.Teams()
	signCount := map[string]int{}
	for i := range c.Ledger {
		e := &c.Ledger[i]
		for f, d := range e.Files {
			st.Files[f] = d
		}
		if e.Seq > 1 && e.Step == string(StepInit) {
			bad(e, ProblemSecondInit, "a second init entry")
			continue
		}
		if e.Seq == 1 && e.Step != string(StepInit) {
			bad(e, ProblemOrder, "the first entry must be init")
		}
		if st.Unblind != nil {
			bad(e, ProblemOrder, "an entry after unblinding")
			continue
		}
		if p.SignerKey(e.Actor) == nil {
			bad(e, ProblemParty, "%q is not a party of the protocol", e.Actor)
			continue
		}
		switch Step(e.Step) {
		case StepInit:
			if e.Actor != protocol.RoleCustodian {
				bad(e, ProblemOrder, "init must be made by the custodian")
			}
			st.salt, _ = hexDecode(e.Data["key_salt"])
			st.keyCom = e.Data["key_commitment"]
			st.LastChange = e.Seq
		case StepSeal:
			o := st.Observables[e.Data["observable"]]
			team := e.Data["team"]
			v, _ := strconv.Atoi(e.Data["version"])
			if o == nil || p.Party(team) == nil || p.Party(team).Role != protocol.RoleTeam {
				bad(e, ProblemOrder, "seals an unknown slot %s/%s", team, e.Data["observable"])
				continue
			}
			if e.Actor != team {
				bad(e, ProblemSignature, "a seal of %s/%s made by %s, not by the team", team, o.Name, e.Actor)
				continue
			}
			prev := 0
			if l := o.Latest[team]; l != nil {
				prev = l.Version
			}
			if v != prev+1 {
				bad(e, ProblemOrder, "seal version %d after version %d", v, prev)
				continue
			}
			s := Slot{team, o.Name}
			path := s.SealedPath(v)
			sl := &Seal{Slot: s, Version: v, Commitment: e.Data["commitment"], Path: path, Digest: e.Files[path], Seq: e.Seq, Reason: e.Data["reason"], AfterRound: o.Round()}
			if o.Latest == nil {
				o.Latest = make(map[string]*Seal, len(teams))
			}
			o.Latest[team] = sl
			if sl.AfterRound > 0 {
				o.Revisions = append(o.Revisions, sl)
			}
			delete(o.Own, team)
			delete(o.Common, team)
			st.LastChange = e.Seq
		case StepBlind, StepOpen:
			if e.Actor != protocol.RoleCustodian {
				bad(e, ProblemOrder, "%s must be made by the custodian", e.Step)
				continue
			}
			o := st.Observables[e.Data["observable"]]
			if o == nil {
				bad(e, ProblemOrder, "names an unknown observable %q", e.Data["observable"])
				continue
			}
			seals := map[string]int{}
			ok := true
			for _, t := range teams {
				v, has := e.Data["seal."+t]
				if !has {
					continue
				}
				l := o.Latest[t]
				n, _ := strconv.Atoi(strings.Fields(v + " x")[0])
				if l == nil || n != l.Version || v != strconv.Itoa(l.Version)+" "+l.Commitment {
					bad(e, ProblemOrder, "blinds %s/%s %s, which is not its latest seal", t, o.Name, v)
					ok = false
					continue
				}
				seals[t] = n
			}
			if !ok || len(seals) == 0 {
				continue
			}
			if e.Step == string(StepOpen) {
				if len(seals) != len(teams) {
					bad(e, ProblemOrder, "opens %s before every team has sealed it", o.Name)
					continue
				}
				o.Rounds = append(o.Rounds, Round{Number: o.Round() + 1, Seq: e.Seq, Seals: seals})
				st.LastChange = e.Seq
			}
			for t, v := range seals {
				s := Slot{t, o.Name}
				if e.Step == string(StepOpen) {
					path := s.BlindedPath(v)
					if o.Common == nil {
						o.Common = make(map[string]*Published, len(teams))
					}
					o.Common[t] = &Published{Path: path, Digest: e.Files[path], Version: v, Seq: e.Seq}
				} else {
					path := s.OwnPath(v)
					if o.Own == nil {
						o.Own = make(map[string]*Published, len(teams))
					}
					o.Own[t] = &Published{Path: path, Digest: e.Files[path], Version: v, Seq: e.Seq}
				}
			}
		case StepSign:
			party := e.Data["party"]
			if e.Actor != party || p.Party(party) == nil {
				bad(e, ProblemSignature, "a sign-off of %q made by %s", party, e.Actor)
				continue
			}
			signCount[party]++
			sp, gp := SignoffPaths(party, signCount[party])
			st.Signs[party] = &SignEntry{Party: party, N: signCount[party], Seq: e.Seq, Statement: sp, Sig: gp, Verdict: e.Data["verdict"], Accepted: e.Data["accepted_disagreement"], StatementHash: e.Files[sp]}
		case StepAmend:
			st.Amends = append(st.Amends, *e)
			st.LastChange = e.Seq
		case StepUnblind:
			if e.Actor != protocol.RoleCustodian {
				bad(e, ProblemOrder, "unblind must be made by the custodian")
				continue
			}
			st.Unblind = e
		default:
			bad(e, ProblemOrder, "unknown step %q", e.Step)
		}
	}
	return st
}

// Unblinded reports whether the campaign has been unblinded.
func (c *Campaign) Unblinded() bool { return c.State().Unblind != nil }

// Slots lists every slot the protocol expects, team-major in declared order.
func (c *Campaign) Slots() []Slot {
	var out []Slot
	for _, t := range c.Protocol.Teams() {
		for _, o := range c.Protocol.Observables {
			out = append(out, Slot{t, o.Name})
		}
	}
	return out
}
