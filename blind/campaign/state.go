package campaign

import (
	"fmt"
	"slices"
	"strconv"
	"strings"

	"tandem/blind/internal/format"
	"tandem/blind/protocol"
)

// Slot is one team's table of one observable.
type Slot struct{ Team, Observable string }

func (s Slot) String() string { return s.Team + "/" + s.Observable }

// SealedPath is the file of one sealed version: its name carries the
// version and the first 12 hex digits of the seal commitment, so two
// seals never share a path, even on two clones at once.
func (s Slot) SealedPath(v int, commitment string) string {
	return "sealed/" + s.Team + "/" + s.Observable + ".v" + strconv.Itoa(v) + "-" + short(commitment) + ".age"
}

// OwnPath is the team-map blinded table of one sealed version.
func (s Slot) OwnPath(v int, commitment string) string {
	return "blinded/" + s.Team + "/" + s.Observable + ".v" + strconv.Itoa(v) + "-" + short(commitment) + ".own.csv"
}

// BlindedPath is the common-map blinded table of one sealed version.
func (s Slot) BlindedPath(v int, commitment string) string {
	return "blinded/" + s.Team + "/" + s.Observable + ".v" + strconv.Itoa(v) + "-" + short(commitment) + ".csv"
}

// UnblindedPath is the true table written by unblind.
func (s Slot) UnblindedPath() string { return "unblinded/" + s.Team + "/" + s.Observable + ".csv" }

// SignoffPaths are the files of a party's n-th sign-off, whose statement
// has the given digest.
func SignoffPaths(party string, n int, digest string) (statement, sig string) {
	base := fmt.Sprintf("signoffs/%s.%d-%s.statement", party, n, short(digest))
	return base, base + ".sig"
}

// short is the first 12 hex digits of a digest, as file names carry it.
func short(d string) string {
	if len(d) < 12 {
		return d
	}
	return d[:12]
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
	// Entry names the seal entry (log#seq).
	Entry string
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
	// Counts is the count-tests file the open entry logged (nil when the
	// observable has no counts column).
	Counts *Published
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
	history   map[string][]*Seal // team → every seal, in version order
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
	// Entry is the sign entry itself.
	Entry *format.Entry
}

// State is the logs replayed once.
type State struct {
	Observables map[string]*ObservableState
	Signs       map[string]*SignEntry
	Amends      []format.Entry
	Unblind     *format.Entry
	// Changes are the seal, open and amend entries: a sign-off whose
	// writer had not seen one of them is stale.
	Changes []*format.Entry
	// Files maps every file the logs cover to its digest: the digest of
	// the one entry that logged it (a path is never logged twice).
	Files map[string]string
	// Owner names the entry that logged each file.
	Owner map[string]string
	// Problems are entries out of the allowed order, by the wrong actor,
	// or whose members disagree.
	Problems []Problem
	salt     []byte
	keyCom   string
}

// State replays the logs (once per Campaign).
func (c *Campaign) State() *State {
	if c.state == nil {
		c.state = c.replay()
	}
	return c.state
}

// stepFiles lists what each step may log: exactly these paths.
func sameKeys(m map[string]string, want []string) bool {
	if len(m) != len(want) {
		return false
	}
	for _, w := range want {
		if _, ok := m[w]; !ok {
			return false
		}
	}
	return true
}

func keys(m map[string]string) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	slices.Sort(out)
	return out
}

func (c *Campaign) replay() *State {
	p := c.Protocol
	st := &State{Observables: make(map[string]*ObservableState, len(p.Observables)), Signs: map[string]*SignEntry{}, Files: make(map[string]string, len(c.Ledger)), Owner: map[string]string{}}
	// the maps of an observable are made when first written (a nil map
	// reads as empty)
	all := make([]ObservableState, len(p.Observables))
	for i, o := range p.Observables {
		all[i].Name = o.Name
		st.Observables[o.Name] = &all[i]
	}
	var cur *format.Entry
	curPath := ""
	bad := func(e *format.Entry, kind ProblemKind, f string, a ...any) {
		st.Problems = append(st.Problems, Problem{Kind: kind, Path: curPath, Party: e.Actor, Message: fmt.Sprintf("entry %s (%s by %s): ", EntryName(e), e.Step, e.Actor) + fmt.Sprintf(f, a...)})
	}
	// files checks that an entry logs exactly the paths its step writes
	files := func(e *format.Entry, want []string) bool {
		if !sameKeys(e.Files, want) {
			slices.Sort(want)
			bad(e, ProblemEntry, "logs %s; a %s step logs exactly %s", listOr(keys(e.Files)), e.Step, listOr(want))
			return false
		}
		return true
	}
	need := func(e *format.Entry, members ...string) bool {
		for _, m := range members {
			if e.Data[m] == "" {
				bad(e, ProblemEntry, "the REQUIRED member %q is missing", m)
				return false
			}
		}
		return true
	}
	teams := p.Teams()
	signCount := map[string]int{}
	init := c.initEntry()
	for i := range c.Ledger {
		e := &c.Ledger[i]
		cur, curPath = e, c.paths[i]
		_ = cur
		if e.Step == string(StepInit) && e != init {
			bad(e, ProblemSecondInit, "a second init entry")
			continue
		}
		if init == nil || !sees(e, init) {
			bad(e, ProblemOrder, "the custodian's first entry must be init, and every entry follows it")
			if init == nil {
				continue
			}
		}
		if p.SignerKey(e.Actor) == nil {
			bad(e, ProblemParty, "%q is not a party of the protocol", e.Actor)
			continue
		}
		if st.Unblind != nil && sees(e, st.Unblind) {
			bad(e, ProblemOrder, "an entry after unblinding")
			continue
		}
		if m := unknownMember(e, teams); m != "" {
			bad(e, ProblemEntry, "holds the member %q, which a %s entry does not have", m, e.Step)
			continue
		}
		// a path is logged once, by the step that writes it
		fresh := true
		for f := range e.Files {
			if prev, ok := st.Owner[f]; ok {
				bad(e, ProblemEntry, "logs %s again (entry %s logged it); a new version is a new path", f, prev)
				fresh = false
			}
		}
		if !fresh {
			continue
		}
		keep := func() {
			for f, d := range e.Files {
				st.Files[f], st.Owner[f] = d, EntryName(e)
			}
		}
		switch Step(e.Step) {
		case StepInit:
			if e.Actor != protocol.RoleCustodian {
				bad(e, ProblemOrder, "init must be made by the custodian")
				continue
			}
			if !need(e, "campaign", "key_salt", "key_commitment", "protocol") || !files(e, []string{KeyFile}) {
				continue
			}
			keep()
			st.salt, _ = hexDecode(e.Data["key_salt"])
			st.keyCom = e.Data["key_commitment"]
		case StepSeal:
			o := st.Observables[e.Data["observable"]]
			team := e.Data["team"]
			if o == nil || p.Party(team) == nil || p.Party(team).Role != protocol.RoleTeam {
				bad(e, ProblemOrder, "seals an unknown slot %s/%s", team, e.Data["observable"])
				continue
			}
			if e.Actor != team {
				bad(e, ProblemSignature, "a seal of %s/%s made by %s, not by the team", team, o.Name, e.Actor)
				continue
			}
			if !need(e, "version", "commitment") {
				continue
			}
			v, err := strconv.Atoi(e.Data["version"])
			if err != nil || strconv.Itoa(v) != e.Data["version"] {
				bad(e, ProblemEntry, "version %q is not a count", e.Data["version"])
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
			com := e.Data["commitment"]
			path := s.SealedPath(v, com)
			if !files(e, []string{path}) {
				continue
			}
			after := 0
			for _, r := range o.Rounds {
				if sees(e, &c.Ledger[r.Seq-1]) {
					after = r.Number
				}
			}
			if after > 0 && strings.TrimSpace(e.Data["reason"]) == "" {
				bad(e, ProblemEntry, "the REQUIRED member \"reason\" is missing: the seal follows round %d of %s", after, o.Name)
				continue
			}
			keep()
			sl := &Seal{Slot: s, Version: v, Commitment: com, Path: path, Digest: e.Files[path], Seq: i + 1, Reason: e.Data["reason"], AfterRound: after, Entry: EntryName(e)}
			if o.Latest == nil {
				o.Latest = make(map[string]*Seal, len(teams))
			}
			o.Latest[team] = sl
			if sl.AfterRound > 0 {
				o.Revisions = append(o.Revisions, sl)
			}
			if o.history == nil {
				o.history = map[string][]*Seal{}
			}
			o.history[team] = append(o.history[team], sl)
			st.Changes = append(st.Changes, e)
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
			seals := map[string]*Seal{}
			ok := true
			countsFile := ""
			for _, t := range teams {
				v, has := e.Data["seal."+t]
				if !has {
					continue
				}
				// the latest seal of T/O its writer had seen
				var l *Seal
				for _, h := range o.history[t] {
					if sees(e, &c.Ledger[h.Seq-1]) {
						l = h
					}
				}
				if l == nil || v != strconv.Itoa(l.Version)+" "+l.Commitment {
					bad(e, ProblemOrder, "blinds %s/%s %s, which is not the latest seal it follows", t, o.Name, v)
					ok = false
					continue
				}
				seals[t] = l
			}
			if !ok || len(seals) == 0 {
				if ok {
					bad(e, ProblemEntry, "names no seal")
				}
				continue
			}
			var want []string
			for t, l := range seals {
				if e.Step == string(StepOpen) {
					// an open publishes the common-map tables not yet
					// published (an earlier round may have)
					if f := (Slot{t, o.Name}).BlindedPath(l.Version, l.Commitment); st.Owner[f] == "" {
						want = append(want, f)
					}
				} else {
					want = append(want, Slot{t, o.Name}.OwnPath(l.Version, l.Commitment))
				}
			}
			if e.Step == string(StepOpen) {
				if len(seals) != len(teams) {
					bad(e, ProblemOrder, "opens %s before every team has sealed it", o.Name)
					continue
				}
				if e.Data["round"] != strconv.Itoa(o.Round()+1) {
					bad(e, ProblemEntry, "round %q, but this is round %d of %s", e.Data["round"], o.Round()+1, o.Name)
					continue
				}
				if ob := p.Observable(o.Name); ob != nil && hasCounts(ob) {
					countsFile = CountsPath(o.Name, o.Round()+1, strings.Repeat("0", 64))
					for f, d := range e.Files {
						if strings.HasPrefix(f, countsPrefix(o.Name, o.Round()+1)) {
							countsFile = CountsPath(o.Name, o.Round()+1, d)
						}
					}
					want = append(want, countsFile)
				}
			}
			if !files(e, want) {
				continue
			}
			keep()
			if e.Step == string(StepOpen) {
				vs := map[string]int{}
				for t, l := range seals {
					vs[t] = l.Version
				}
				r := Round{Number: o.Round() + 1, Seq: i + 1, Seals: vs}
				if countsFile != "" {
					r.Counts = &Published{Path: countsFile, Digest: e.Files[countsFile], Seq: i + 1}
				}
				o.Rounds = append(o.Rounds, r)
				st.Changes = append(st.Changes, e)
			}
			for t, l := range seals {
				s := Slot{t, o.Name}
				if e.Step == string(StepOpen) {
					path := s.BlindedPath(l.Version, l.Commitment)
					if o.Common == nil {
						o.Common = make(map[string]*Published, len(teams))
					}
					o.Common[t] = &Published{Path: path, Digest: st.Files[path], Version: l.Version, Seq: i + 1}
				} else {
					path := s.OwnPath(l.Version, l.Commitment)
					if o.Own == nil {
						o.Own = make(map[string]*Published, len(teams))
					}
					o.Own[t] = &Published{Path: path, Digest: e.Files[path], Version: l.Version, Seq: i + 1}
				}
			}
		case StepSign:
			party := e.Data["party"]
			if e.Actor != party || p.Party(party) == nil {
				bad(e, ProblemSignature, "a sign-off of %q made by %s", party, e.Actor)
				continue
			}
			if !need(e, "verdict") {
				continue
			}
			n := signCount[party] + 1
			var sp string
			for f := range e.Files {
				if strings.HasSuffix(f, ".statement") {
					sp = f
				}
			}
			want, wantSig := SignoffPaths(party, n, e.Files[sp])
			if sp == "" || !files(e, []string{want, wantSig}) {
				if sp == "" {
					bad(e, ProblemEntry, "logs no statement; a sign step logs signoffs/%s.%d-DIGEST12.statement and its .sig", party, n)
				}
				continue
			}
			switch v := e.Data["verdict"]; {
			case v != string(Pass) && v != string(Fail):
				bad(e, ProblemEntry, "verdict %q is neither pass nor fail", v)
				continue
			case (v == string(Fail)) != (e.Data["accepted_disagreement"] != ""):
				bad(e, ProblemEntry, "accepted_disagreement is present exactly when the verdict is fail")
				continue
			}
			keep()
			signCount[party] = n
			st.Signs[party] = &SignEntry{Party: party, N: n, Seq: i + 1, Statement: want, Sig: wantSig, Verdict: e.Data["verdict"], Accepted: e.Data["accepted_disagreement"], StatementHash: e.Files[want], Entry: e}
		case StepAmend:
			if !need(e, "reason", "protocol") || !files(e, nil) {
				continue
			}
			keep()
			st.Amends = append(st.Amends, *e)
			st.Changes = append(st.Changes, e)
		case StepUnblind:
			if e.Actor != protocol.RoleCustodian {
				bad(e, ProblemOrder, "unblind must be made by the custodian")
				continue
			}
			want := []string{RevealedFile}
			for _, s := range c.Slots() {
				want = append(want, s.UnblindedPath())
			}
			if !need(e, "key_salt") || !files(e, want) {
				continue
			}
			if e.Data["key_salt"] != init.Data["key_salt"] {
				bad(e, ProblemEntry, "key_salt differs from the init entry's")
				continue
			}
			keep()
			st.Unblind = e
		default:
			bad(e, ProblemOrder, "unknown step %q", e.Step)
		}
	}
	if u := st.Unblind; u != nil {
		for i := range c.Ledger {
			if e := &c.Ledger[i]; !sees(u, e) && !sees(e, u) {
				curPath = c.paths[i]
				bad(e, ProblemOrder, "an entry the unblind entry %s did not see: unblinding must come last", EntryName(u))
			}
		}
	}
	return st
}

func listOr(s []string) string {
	if len(s) == 0 {
		return "no file"
	}
	return strings.Join(s, ", ")
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

// unstale lists the parties whose latest sign-off follows every seal,
// open and amend entry: those a new change makes stale.
func (st *State) unstale() []string {
	var out []string
	for party, s := range st.Signs {
		ok := true
		for _, ch := range st.Changes {
			if !sees(s.Entry, ch) {
				ok = false
				break
			}
		}
		if ok {
			out = append(out, party)
		}
	}
	slices.Sort(out)
	return out
}

// stepMembers are the data members each step may hold, besides the
// after.LOG members every entry may hold and the seal.TEAM members of
// blind and open.
var stepMembers = map[Step][]string{
	StepInit:    {"campaign", "key_salt", "key_commitment", "protocol"},
	StepSeal:    {"team", "observable", "version", "commitment", "reason"},
	StepBlind:   {"observable"},
	StepOpen:    {"observable", "round"},
	StepSign:    {"party", "verdict", "accepted_disagreement"},
	StepAmend:   {"reason", "protocol"},
	StepUnblind: {"signed_by", "key_salt"},
}

// unknownMember returns a data member e's step does not have, or "".
func unknownMember(e *format.Entry, teams []string) string {
	allowed, ok := stepMembers[Step(e.Step)]
	if !ok {
		return "" // an unknown step is reported as such
	}
	for _, k := range keys(e.Data) {
		switch {
		case strings.HasPrefix(k, afterPrefix), slices.Contains(allowed, k):
		case (e.Step == string(StepBlind) || e.Step == string(StepOpen)) && strings.HasPrefix(k, "seal.") && slices.Contains(teams, k[len("seal."):]):
		default:
			return k
		}
	}
	return ""
}
