package blind

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"sort"
	"strconv"
	"strings"
	"time"

	"golang.org/x/crypto/ssh"

	"tandem/blind/internal/sshsig"
	"tandem/compare"
	"tandem/compare/table"
)

// Namespace is the SSHSIG namespace of sign-offs:
//
//	ssh-keygen -Y verify -n tandem-signoff -f allowed_signers -I PARTY -s PARTY.statement.sig < PARTY.statement
const Namespace = "tandem-signoff"

// StatementHeader starts every sign-off statement.
const StatementHeader = FormatV1 + " signoff"

// Compare compares, for every observable, every pair of teams on every
// declared column, using the blinded or the unblinded tables. Slots without
// a table are listed in missing.
func (c *Campaign) Compare(kind TableKind) (s *compare.Summary, missing []string, err error) {
	p := c.Protocol
	s = &compare.Summary{Title: "campaign " + p.Campaign}
	teams := p.Teams()
	for oi := range p.Observables {
		o := &p.Observables[oi]
		tables := map[string]*table.Table{}
		for _, t := range teams {
			sl := Slot{t, o.Name}
			if kind == Blinded {
				if ss := c.State()[sl]; ss == nil || !ss.Blinded {
					missing = append(missing, sl.String())
					continue
				}
			} else if _, err := os.Stat(c.path(sl.UnblindedPath())); err != nil {
				missing = append(missing, sl.String())
				continue
			}
			tb, err := c.ReadTable(sl, kind)
			if err != nil {
				return nil, nil, err
			}
			tables[t] = tb
		}
		for i := 0; i < len(teams); i++ {
			for j := i + 1; j < len(teams); j++ {
				a, b := tables[teams[i]], tables[teams[j]]
				if a == nil || b == nil {
					continue
				}
				for ci := range o.Columns {
					col := &o.Columns[ci]
					rs, err := compare.Tables(a, b, []table.Selection{col.Selection()}, 1e-9, col.Options())
					if err != nil {
						return nil, nil, fmt.Errorf("observable %s, %s vs %s: %w", o.Name, teams[i], teams[j], err)
					}
					s.Entries = append(s.Entries, compare.Entry{
						Observable: o.Name, Teams: [2]string{teams[i], teams[j]},
						XLabel: o.XLabel, YLabel: o.YLabel, Blinded: kind == Blinded, Result: rs[0],
					})
				}
			}
		}
	}
	return s, missing, nil
}

// ComparisonDigest is the SHA-256 of a canonical text encoding of the
// statistics of every comparison (names, verdict, χ², ndf, every p-value,
// pull moments and every pull). It depends only on the tables, so verify
// can recompute it. Numbers are written with 8 significant digits, so a
// later version of tandem whose arithmetic differs in the last bits still
// recomputes the digest that was signed.
func ComparisonDigest(s *compare.Summary) string {
	h := sha256.New()
	fmt.Fprintf(h, "%s comparison\n", FormatV1)
	f := func(v float64) string {
		if v == 0 {
			return "0"
		}
		return strconv.FormatFloat(v, 'g', 8, 64)
	}
	for _, e := range s.Entries {
		fmt.Fprintf(h, "%s|%s|%s|%s|%d|%s|%s|%d|%s|%s|%s|%s|%s|%s|%s|", e.Observable, e.Column, e.Teams[0], e.Teams[1],
			e.Bins, e.Verdict(), f(e.Chi2), e.NDF, f(e.PValue), f(e.PullMean), f(e.PullWidth), f(e.MaxAbsPull),
			f(e.MaxPullP), f(e.KSP), f(e.RunsP))
		for _, p := range e.Pulls {
			fmt.Fprintf(h, "%s,", f(p))
		}
		fmt.Fprintln(h)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// Statement is a parsed sign-off statement.
type Statement struct {
	Campaign, Party, Role, Date string
	Protocol, KeyCommitment     string
	LedgerSeq                   int
	LedgerHash                  string
	Sealed, Blinded             []string // "T/O vN COMMITMENT", "T/O DIGEST"
	Comparison, Verdict         string
	Accepted                    string
}

// Encode writes the statement in its canonical text form.
func (st *Statement) Encode() []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "%s\ncampaign: %s\nparty: %s\nrole: %s\ndate: %s\nprotocol: %s\nkey-commitment: %s\nledger-head: %d %s\n",
		StatementHeader, st.Campaign, st.Party, st.Role, st.Date, st.Protocol, st.KeyCommitment, st.LedgerSeq, st.LedgerHash)
	for _, s := range st.Sealed {
		fmt.Fprintf(&b, "sealed: %s\n", s)
	}
	for _, s := range st.Blinded {
		fmt.Fprintf(&b, "blinded: %s\n", s)
	}
	fmt.Fprintf(&b, "comparison: %s\nverdict: %s\n", st.Comparison, st.Verdict)
	if st.Accepted != "" {
		fmt.Fprintf(&b, "accepted-disagreement: %s\n", st.Accepted)
	}
	return b.Bytes()
}

// ParseStatement parses a statement and checks it is canonical.
func ParseStatement(name string, data []byte) (*Statement, error) {
	lines := strings.Split(string(data), "\n")
	if len(lines) < 2 || lines[0] != StatementHeader || lines[len(lines)-1] != "" {
		return nil, table.Errorf(name, 1, 1, "not a %s statement", StatementHeader)
	}
	st := &Statement{}
	for i, line := range lines[1 : len(lines)-1] {
		k, v, ok := strings.Cut(line, ": ")
		if !ok {
			return nil, table.Errorf(name, i+2, 1, "expected \"key: value\"")
		}
		switch k {
		case "campaign":
			st.Campaign = v
		case "party":
			st.Party = v
		case "role":
			st.Role = v
		case "date":
			st.Date = v
		case "protocol":
			st.Protocol = v
		case "key-commitment":
			st.KeyCommitment = v
		case "ledger-head":
			seq, hash, _ := strings.Cut(v, " ")
			n, err := strconv.Atoi(seq)
			if err != nil {
				return nil, table.Errorf(name, i+2, 14, "malformed ledger head")
			}
			st.LedgerSeq, st.LedgerHash = n, hash
		case "sealed":
			st.Sealed = append(st.Sealed, v)
		case "blinded":
			st.Blinded = append(st.Blinded, v)
		case "comparison":
			st.Comparison = v
		case "verdict":
			st.Verdict = v
		case "accepted-disagreement":
			st.Accepted = v
		default:
			return nil, table.Errorf(name, i+2, 1, "unknown statement key %q", k)
		}
	}
	if !bytes.Equal(st.Encode(), data) {
		return nil, table.Errorf(name, 0, 0, "statement is not in canonical form")
	}
	return st, nil
}

// SignoffPaths are the campaign-relative files of a party's sign-off.
func SignoffPaths(party string) (statement, sig string) {
	return "signoffs/" + party + ".statement", "signoffs/" + party + ".statement.sig"
}

// current builds the state-dependent part of a statement from the
// campaign as it is now.
func (c *Campaign) current() (*Statement, *compare.Summary, error) {
	_, com, err := c.KeyCommitment()
	if err != nil {
		return nil, nil, err
	}
	st := &Statement{Campaign: c.Protocol.Campaign, Protocol: digest(c.ProtocolBytes), KeyCommitment: hex.EncodeToString(com[:])}
	state := c.State()
	var missing []string
	for _, s := range c.Slots() {
		ss := state[s]
		if ss == nil || !ss.Blinded {
			missing = append(missing, s.String())
			continue
		}
		st.Sealed = append(st.Sealed, fmt.Sprintf("%s v%d %s", s, ss.Version, ss.Commitment))
		st.Blinded = append(st.Blinded, fmt.Sprintf("%s %s", s, ss.BlindedDigest))
	}
	if len(missing) > 0 {
		return nil, nil, &RefusedError{Step: "sign", Problems: []string{"no blinded table yet for " + strings.Join(missing, ", ")}}
	}
	sum, _, err := c.Compare(Blinded)
	if err != nil {
		return nil, nil, err
	}
	st.Comparison, st.Verdict = ComparisonDigest(sum), sum.Verdict()
	return st, sum, nil
}

// NewStatement drafts the statement a party signs: it binds the campaign,
// the key commitment, every sealed commitment and blinded digest, the ledger
// head, the comparison digest and its verdict. A failing verdict needs a
// reason, which goes into the statement.
func (c *Campaign) NewStatement(party, acceptReason string) (*Statement, *compare.Summary, error) {
	if c.Unblinded() {
		return nil, nil, &RefusedError{Step: "sign", Problems: []string{"the campaign is already unblinded"}}
	}
	q := c.Protocol.Party(party)
	if q == nil {
		return nil, nil, fmt.Errorf("%q is not a party of campaign %s", party, c.Protocol.Campaign)
	}
	st, sum, err := c.current()
	if err != nil {
		return nil, nil, err
	}
	if strings.ContainsAny(acceptReason, "\r\n") {
		return nil, nil, fmt.Errorf("the reason for accepting a disagreement must be one line")
	}
	switch {
	case st.Verdict == "fail" && strings.TrimSpace(acceptReason) == "":
		return nil, nil, &RefusedError{Step: "sign", Problems: []string{"the comparison disagrees; signing needs --accept-disagreement with a reason"}}
	case st.Verdict == "pass" && acceptReason != "":
		return nil, nil, fmt.Errorf("the comparison agrees; there is no disagreement to accept")
	}
	head := c.Ledger[len(c.Ledger)-1]
	st.Party, st.Role = party, q.Role
	st.Date = c.now().UTC().Format(time.RFC3339)
	st.LedgerSeq, st.LedgerHash = head.Seq, head.hash
	st.Accepted = strings.TrimSpace(acceptReason)
	return st, sum, nil
}

// SaveSignoff checks sig over the statement against the party's key, then
// writes both files and logs the sign-off.
func (c *Campaign) SaveSignoff(st *Statement, sig []byte) error {
	q := c.Protocol.Party(st.Party)
	if q == nil {
		return fmt.Errorf("%q is not a party", st.Party)
	}
	body := st.Encode()
	if err := sshsig.Verify(sig, body, Namespace, q.PublicKey()); err != nil {
		return &RefusedError{Step: "sign", Problems: []string{fmt.Sprintf("signature for %s: %v", st.Party, err)}}
	}
	unlock, err := lock(c.Dir)
	if err != nil {
		return err
	}
	defer unlock()
	if err := c.reload(); err != nil {
		return err
	}
	if probs := c.staleness(st); len(probs) > 0 {
		return &RefusedError{Step: "sign", Problems: probs}
	}
	sp, gp := SignoffPaths(st.Party)
	files, err := c.writeLogged(map[string][]byte{sp: body, gp: sig}, 0o644)
	if err != nil {
		return err
	}
	data := map[string]string{"party": st.Party, "verdict": st.Verdict}
	if st.Accepted != "" {
		data["accepted_disagreement"] = st.Accepted
	}
	return c.appendEntry(Entry{Step: "sign", Actor: c.Actor, Files: files, Data: data})
}

// Sign drafts, signs with signer and saves a party's sign-off.
func (c *Campaign) Sign(party, acceptReason string, signer ssh.Signer) (*Statement, error) {
	st, _, err := c.NewStatement(party, acceptReason)
	if err != nil {
		return nil, err
	}
	sig, err := sshsig.Sign(signer, Namespace, st.Encode())
	if err != nil {
		return nil, err
	}
	return st, c.SaveSignoff(st, sig)
}

// staleness lists why a statement does not match the campaign as it stands.
func (c *Campaign) staleness(st *Statement) []string {
	var probs []string
	who := "sign-off of " + st.Party
	if st.Campaign != c.Protocol.Campaign {
		return []string{fmt.Sprintf("%s is for campaign %q, not %q (replayed?)", who, st.Campaign, c.Protocol.Campaign)}
	}
	if q := c.Protocol.Party(st.Party); q == nil || q.Role != st.Role {
		probs = append(probs, fmt.Sprintf("%s names role %q, the protocol says otherwise", who, st.Role))
	}
	// The ledger head it names must be in this chain, with no seal or blind
	// after it.
	if st.LedgerSeq < 1 || st.LedgerSeq > len(c.Ledger) || c.Ledger[st.LedgerSeq-1].hash != st.LedgerHash {
		probs = append(probs, fmt.Sprintf("%s names a ledger entry that is not in this campaign's ledger", who))
	} else {
		for _, e := range c.Ledger[st.LedgerSeq:] {
			if e.Step == "seal" || e.Step == "blind" {
				probs = append(probs, fmt.Sprintf("%s is stale: %s/%s was %sed after it (entry %d)", who, e.Data["team"], e.Data["observable"], e.Step, e.Seq))
				break
			}
		}
	}
	cur, _, err := c.current()
	if err != nil {
		return append(probs, fmt.Sprintf("%s: cannot recompute the campaign state: %v", who, err))
	}
	if st.Protocol != cur.Protocol {
		probs = append(probs, who+" was made for another version of campaign.toml")
	}
	if st.KeyCommitment != cur.KeyCommitment {
		probs = append(probs, who+" names another key commitment")
	}
	if strings.Join(st.Sealed, "\n") != strings.Join(cur.Sealed, "\n") || strings.Join(st.Blinded, "\n") != strings.Join(cur.Blinded, "\n") {
		probs = append(probs, who+" is stale: the sealed or blinded tables have changed since")
	}
	if st.Comparison != cur.Comparison || st.Verdict != cur.Verdict {
		probs = append(probs, who+" does not match the comparison recomputed from the blinded tables")
	}
	if st.Verdict == "fail" && st.Accepted == "" {
		probs = append(probs, who+" signs a failing comparison without a reason")
	}
	return probs
}

// SignoffStatus is the result of checking one party's sign-off.
type SignoffStatus struct {
	Party     string
	Present   bool
	Valid     bool // signature good and statement current
	Statement *Statement
	Problems  []string
}

// CheckSignoffs checks the sign-off of every party, and reports files in
// signoffs/ that belong to no party.
func (c *Campaign) CheckSignoffs() ([]SignoffStatus, []string) {
	var out []SignoffStatus
	var extra []string
	known := map[string]bool{}
	for _, q := range c.Protocol.Parties {
		sp, gp := SignoffPaths(q.Name)
		known[sp], known[gp] = true, true
		s := SignoffStatus{Party: q.Name}
		body, err1 := os.ReadFile(c.path(sp))
		sig, err2 := os.ReadFile(c.path(gp))
		if os.IsNotExist(err1) && os.IsNotExist(err2) {
			out = append(out, s)
			continue
		}
		s.Present = true
		switch {
		case err1 != nil:
			s.Problems = append(s.Problems, fmt.Sprintf("%s: %v", sp, unwrapPath(err1)))
		case err2 != nil:
			s.Problems = append(s.Problems, fmt.Sprintf("%s: %v", gp, unwrapPath(err2)))
		default:
			if err := sshsig.Verify(sig, body, Namespace, q.PublicKey()); err != nil {
				s.Problems = append(s.Problems, fmt.Sprintf("%s: %v", gp, err))
			} else if st, err := ParseStatement(sp, body); err != nil {
				s.Problems = append(s.Problems, err.Error())
			} else if st.Party != q.Name {
				s.Problems = append(s.Problems, fmt.Sprintf("%s: statement is by %q", sp, st.Party))
			} else {
				s.Statement = st
				s.Problems = append(s.Problems, c.staleness(st)...)
			}
		}
		s.Valid = len(s.Problems) == 0
		out = append(out, s)
	}
	entries, _ := os.ReadDir(c.path("signoffs"))
	for _, e := range entries {
		rel := "signoffs/" + e.Name()
		if !known[rel] && !strings.HasPrefix(e.Name(), ".") {
			extra = append(extra, rel+": not the sign-off of any party in the protocol")
		}
	}
	sort.Strings(extra)
	return out, extra
}

// QuorumProblems lists what keeps the quorum from being met.
func (c *Campaign) QuorumProblems(status []SignoffStatus) []string {
	var probs []string
	by := map[string]SignoffStatus{}
	for _, s := range status {
		by[s.Party] = s
	}
	for _, n := range c.Protocol.Quorum {
		s := by[n]
		switch {
		case !s.Present:
			probs = append(probs, fmt.Sprintf("missing sign-off: %s has not signed", n))
		case !s.Valid:
			for _, p := range s.Problems {
				probs = append(probs, p)
			}
		}
	}
	return probs
}

// ReadSigner loads an SSH private key file for signing. Keys protected by
// a passphrase are refused with a hint to use ssh-agent; the key material
// never appears in errors.
func ReadSigner(path string) (ssh.Signer, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, table.Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	s, err := ssh.ParsePrivateKey(data)
	if err != nil {
		if _, ok := err.(*ssh.PassphraseMissingError); ok {
			return nil, table.Errorf(path, 0, 0, "key is protected by a passphrase; load it into ssh-agent and sign without --key")
		}
		return nil, table.Errorf(path, 0, 0, "not an SSH private key")
	}
	return s, nil
}

// SignStatement makes the armored SSHSIG signature of a statement.
func SignStatement(signer ssh.Signer, st *Statement) ([]byte, error) {
	return sshsig.Sign(signer, Namespace, st.Encode())
}
