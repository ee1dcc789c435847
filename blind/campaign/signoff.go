package campaign

import (
	"encoding/hex"
	"fmt"
	"strings"
	"time"

	"golang.org/x/crypto/ssh"

	"tandem/blind/internal/format"
	"tandem/blind/internal/sshsig"
)

// Statement is a sign-off statement (see the format for its bytes).
type Statement = format.Statement

// SignoffNamespace is the SSHSIG namespace of sign-offs.
const SignoffNamespace = format.SignoffNamespace

// ParseStatement parses a statement and checks it is canonical.
func ParseStatement(name string, data []byte) (*Statement, error) {
	return format.ParseStatement(name, data)
}

// current builds the state-dependent part of a statement from the
// campaign as it is now.
func (c *Campaign) current() (*Statement, error) {
	_, com, err := c.KeyCommitment()
	if err != nil {
		return nil, err
	}
	cmp, err := c.Compare()
	if err != nil {
		return nil, err
	}
	st := &Statement{Campaign: c.Protocol.Campaign, Protocol: c.protocolDigest(), KeyCommitment: hex.EncodeToString(com[:])}
	state := c.State()
	for _, s := range c.Slots() {
		os := state.Observables[s.Observable]
		l, pub := os.Latest[s.Team], cmp.Tables[s]
		if l == nil || pub == nil {
			continue
		}
		fp := ssh.FingerprintSHA256(c.Protocol.Party(s.Team).PublicKey())
		st.Sealed = append(st.Sealed, fmt.Sprintf("%s v%d %s by %s %s", s, l.Version, l.Commitment, s.Team, fp))
		st.Blinded = append(st.Blinded, fmt.Sprintf("%s %s", s, pub.Digest))
	}
	for _, o := range c.Protocol.Observables {
		for _, col := range o.Columns {
			if col.AcceptRisk != "" {
				st.AcceptedRisks = append(st.AcceptedRisks, fmt.Sprintf("%s/%s %s", o.Name, col.Name, col.AcceptRisk))
			}
		}
	}
	st.Compared = comparedLines(cmp)
	st.Comparison, st.Verdict = cmp.Digest, string(cmp.Verdict)
	return st, nil
}

// Draft drafts the statement a party signs: it binds the campaign, the key
// commitment, every sealed commitment (with the team that signed it) and
// blinded digest, the ledger head, every comparison with its verdict, the
// comparison digest of those lines and the campaign's verdict.
// Each failing comparison needs its own reason, given in accept as
// "OBSERVABLE=REASON", or "OBSERVABLE/COLUMN=REASON" when the observable
// has several columns (see [ParseAcceptance]); the statement binds each
// reason to its comparison. Empty strings in accept are ignored. An
// incomplete campaign cannot be signed.
func (c *Campaign) Draft(party string, accept ...string) (*Statement, *Comparison, error) {
	if c.Unblinded() {
		return nil, nil, refuse(StepSign, ProblemState, "the campaign is already unblinded")
	}
	q := c.Protocol.Party(party)
	if q == nil {
		return nil, nil, fmt.Errorf("%q is not a party of campaign %s", party, c.Protocol.Campaign)
	}
	st, err := c.current()
	if err != nil {
		return nil, nil, err
	}
	reasons, err := c.ParseAcceptance(accept)
	if err != nil {
		return nil, nil, err
	}
	cmp, _ := c.Compare()
	switch {
	case cmp.Verdict == Incomplete:
		var ps []Problem
		for _, p := range cmp.Incomplete {
			ps = append(ps, Problem{Kind: ProblemMissing, Message: p.Observable + ": incomplete, " + p.Reason})
		}
		return nil, nil, &RefusedError{Step: StepSign, Problems: ps}
	}
	accepted, err := acceptLines(cmp, reasons)
	if err != nil {
		return nil, nil, err
	}
	if d, err := st.ComparisonDigest(); err != nil || d != cmp.Digest {
		// The statement's lines must give the digest they end with.
		return nil, nil, fmt.Errorf("internal error: the statement's compared lines do not give the comparison digest (%v)", err)
	}
	st.Party, st.Role = party, q.Role
	st.Date = c.now().UTC().Format(time.RFC3339)
	c.drafted = c.Heads()
	st.LedgerSeq, st.LedgerHash = c.ViewDigest(c.drafted)
	st.Accepted = accepted
	return st, cmp, nil
}

// Sign signs a drafted statement with signer (the party's key), then,
// under the lock, checks that the campaign has not changed since the
// draft, writes the statement and its signature and logs the sign-off.
func (c *Campaign) Sign(st *Statement, signer ssh.Signer) (statementPath string, err error) {
	q := c.Protocol.Party(st.Party)
	if q == nil {
		return "", fmt.Errorf("%q is not a party", st.Party)
	}
	if string(signer.PublicKey().Marshal()) != string(q.PublicKey().Marshal()) {
		return "", refuse(StepSign, ProblemSignature, "the signing key is not the one the protocol lists for %s (%s)", st.Party, ssh.FingerprintSHA256(q.PublicKey()))
	}
	body := st.Encode()
	sig, err := sshsig.Sign(signer, SignoffNamespace, body)
	if err != nil {
		return "", err
	}
	unlock, err := c.begin(StepSign)
	if err != nil {
		return "", err
	}
	defer unlock()
	heads := c.Heads()
	if n, h := c.ViewDigest(heads); n != st.LedgerSeq || h != st.LedgerHash {
		var what []string
		for i := range c.Ledger {
			if e := &c.Ledger[i]; c.drafted == nil || e.Seq > c.drafted[e.Actor] {
				what = append(what, describeEntry(e))
			}
		}
		return "", refuse(StepSign, ProblemStale, "the campaign changed while the statement was open for signing (%s); nothing was signed: run tandem sign again to see the new statement", strings.Join(what, "; "))
	}
	if probs := c.staleness(st, heads, nil); len(probs) > 0 {
		return "", &RefusedError{Step: StepSign, Problems: probs}
	}
	n := 1
	if prev := c.State().Signs[st.Party]; prev != nil {
		n = prev.N + 1
	}
	sp, gp := SignoffPaths(st.Party, n, format.Digest(body))
	if err := c.removeLeftovers(fmt.Sprintf("signoffs/%s.%d-", st.Party, n)); err != nil { // left by an interrupted sign
		return "", err
	}
	if err := c.root.CreateExclusive(sp, body, 0o644); err != nil {
		return "", err
	}
	if err := c.root.CreateExclusive(gp, sig, 0o644); err != nil {
		return "", err
	}
	crashPoint("sign")
	data := map[string]string{"party": st.Party, "verdict": st.Verdict}
	if len(st.Accepted) > 0 {
		data["accepted_disagreement"] = format.AcceptedMember(st.Accepted)
	}
	err = c.appendEntry(format.Entry{Step: string(StepSign), Actor: st.Party,
		Files: map[string]string{sp: format.Digest(body), gp: format.Digest(sig)}, Data: data}, signer)
	return sp, err
}

// describeEntry says in words what a ledger entry did.
func describeEntry(e *format.Entry) string {
	switch Step(e.Step) {
	case StepSeal:
		if e.Data["version"] != "1" {
			return fmt.Sprintf("%s re-sealed %s (v%s, entry %s)", e.Actor, e.Data["observable"], e.Data["version"], EntryName(e))
		}
		return fmt.Sprintf("%s sealed %s (entry %s)", e.Actor, e.Data["observable"], EntryName(e))
	case StepOpen:
		return fmt.Sprintf("the custodian opened %s round %s (entry %s)", e.Data["observable"], e.Data["round"], EntryName(e))
	case StepBlind:
		return fmt.Sprintf("the custodian blinded %s in team maps (entry %s)", e.Data["observable"], EntryName(e))
	case StepAmend:
		return fmt.Sprintf("%s amended the protocol (entry %s)", e.Actor, EntryName(e))
	case StepSign:
		return fmt.Sprintf("%s signed off (entry %s)", e.Actor, EntryName(e))
	}
	return fmt.Sprintf("%s by %s (entry %s)", e.Step, e.Actor, EntryName(e))
}

// staleness lists why a statement does not match the campaign as it
// stands. v is what its signer had seen: the sign entry's view, or the
// heads at signing time; e is the sign entry (nil while signing).
func (c *Campaign) staleness(st *Statement, v View, e *format.Entry) []Problem {
	var probs []Problem
	who := "sign-off of " + st.Party
	add := func(kind ProblemKind, f string, a ...any) {
		probs = append(probs, Problem{Kind: kind, Party: st.Party, Message: fmt.Sprintf(f, a...)})
	}
	if st.Campaign != c.Protocol.Campaign {
		add(ProblemSignoff, "%s is for campaign %q, not %q (replayed?)", who, st.Campaign, c.Protocol.Campaign)
		return probs
	}
	if q := c.Protocol.Party(st.Party); q == nil || q.Role != st.Role {
		add(ProblemSignoff, "%s names role %q, the protocol says otherwise", who, st.Role)
	}
	if n, h := c.ViewDigest(v); n != st.LedgerSeq || h != st.LedgerHash {
		add(ProblemSignoff, "%s names another view of the logs (ledger-head %d %.12s…) than its sign entry (%d %.12s…)", who, st.LedgerSeq, st.LedgerHash, n, h)
		return probs
	}
	if e != nil {
		if e.Data["verdict"] != st.Verdict || e.Data["accepted_disagreement"] != format.AcceptedMember(st.Accepted) {
			add(ProblemSignoff, "%s: the sign entry %s logs verdict %q and reasons %q, the statement %q and %q", who, EntryName(e), e.Data["verdict"], e.Data["accepted_disagreement"], st.Verdict, format.AcceptedMember(st.Accepted))
			return probs
		}
	}
	if _, com, err := c.KeyCommitment(); err == nil && st.KeyCommitment != hex.EncodeToString(com[:]) {
		// checked before staleness: a stale statement is still refused
		// when it names another key
		add(ProblemSignoff, "%s names another key commitment", who)
		return probs
	}
	for _, ch := range c.State().Changes {
		if ch.Seq > v[ch.Actor] {
			add(ProblemStale, "%s is stale: %s after it", who, describeEntry(ch))
			return probs
		}
	}
	cur, err := c.current()
	if err != nil {
		add(ProblemSignoff, "%s cannot be checked: %v", who, err)
		return probs
	}
	if st.Protocol != cur.Protocol {
		add(ProblemStale, "%s was made for another version of campaign.toml", who)
	}
	if strings.Join(st.Sealed, "\n") != strings.Join(cur.Sealed, "\n") || strings.Join(st.Blinded, "\n") != strings.Join(cur.Blinded, "\n") {
		add(ProblemStale, "%s is stale: the sealed or blinded tables have changed since", who)
	}
	if diff := comparedDiff(st.Compared, cur.Compared); diff != "" {
		add(ProblemComparison, "%s lists other comparisons than the blinded tables give: %s", who, diff)
	} else if st.Comparison != cur.Comparison || st.Verdict != cur.Verdict {
		add(ProblemSignoff, "%s does not match the comparison recomputed from the blinded tables", who)
	}
	if strings.Join(st.AcceptedRisks, "\n") != strings.Join(cur.AcceptedRisks, "\n") {
		add(ProblemStale, "%s names other accepted risks than the protocol", who)
	}
	if st.Verdict == string(Fail) && len(st.Accepted) == 0 {
		add(ProblemSignoff, "%s signs a failing comparison without a reason", who)
	}
	return probs
}

// SignoffStatus is the result of checking one party's sign-off.
type SignoffStatus struct {
	Party     string     `json:"party"`
	Present   bool       `json:"present"`
	Valid     bool       `json:"valid"` // signature good and statement current
	Stale     bool       `json:"stale"`
	Statement *Statement `json:"-"`
	Problems  []Problem  `json:"problems,omitempty"`
}

// Signoffs checks the latest sign-off of every party (once per command).
func (c *Campaign) Signoffs() []SignoffStatus {
	if c.signoffs == nil {
		c.signoffs = c.checkSignoffs()
	}
	return c.signoffs
}

func (c *Campaign) checkSignoffs() []SignoffStatus {
	st := c.State()
	var out []SignoffStatus
	for _, q := range c.Protocol.Parties {
		s := SignoffStatus{Party: q.Name}
		e := st.Signs[q.Name]
		if e == nil {
			out = append(out, s)
			continue
		}
		s.Present = true
		bad := func(path string, err error) {
			s.Problems = append(s.Problems, Problem{Kind: ProblemSignoff, Path: path, Party: q.Name, Message: err.Error()})
		}
		body, err1 := c.root.ReadFile(e.Statement, maxSmall)
		sig, err2 := c.root.ReadFile(e.Sig, maxSmall)
		switch {
		case err1 != nil:
			bad(e.Statement, unwrapPath(err1))
		case err2 != nil:
			bad(e.Sig, unwrapPath(err2))
		default:
			if err := sshsig.Verify(sig, body, SignoffNamespace, q.PublicKey()); err != nil {
				bad(e.Sig, err)
			} else if stmt, err := ParseStatement(c.Path(e.Statement), body); err != nil {
				bad(e.Statement, err)
			} else if stmt.Party != q.Name {
				bad(e.Statement, fmt.Errorf("statement is by %q", stmt.Party))
			} else {
				s.Statement = stmt
				for _, p := range c.staleness(stmt, view(e.Entry), e.Entry) {
					if p.Kind == ProblemStale {
						s.Stale = true
					}
					s.Problems = append(s.Problems, p)
				}
			}
		}
		s.Valid = len(s.Problems) == 0
		out = append(out, s)
	}
	return out
}

// QuorumProblems lists what keeps the quorum from being met.
func (c *Campaign) QuorumProblems(status []SignoffStatus) []Problem {
	var probs []Problem
	by := map[string]SignoffStatus{}
	for _, s := range status {
		by[s.Party] = s
	}
	for _, n := range c.Protocol.Quorum {
		s := by[n]
		switch {
		case !s.Present:
			probs = append(probs, Problem{Kind: ProblemNoSignoff, Party: n, Message: "missing sign-off: " + n + " has not signed"})
		case !s.Valid:
			probs = append(probs, s.Problems...)
		}
	}
	return probs
}
