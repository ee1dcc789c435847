package campaign

import (
	"bytes"
	"encoding/hex"
	"strings"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"

	"tandem/blind/internal/format"
	"tandem/blind/protocol"
)

// UnblindResult says what unblind did.
type UnblindResult struct {
	// Files lists the unblinded tables written.
	Files []string
	// Resumed is set when the campaign was already unblinded and this run
	// only finished the reports an interrupted unblind had left undone.
	Resumed bool
	// Reports lists the report files written.
	Reports []string
}

// Unblind reveals the true tables, if and only if everything verifies and
// the quorum has signed the campaign as it stands. It runs the audit pass
// verify runs, checks that every observable is open and the quorum, then
// opens K, checks it against its commitment, decrypts every latest seal,
// checks it against its seal-time commitment and the published table
// against it, writes the unblinded tables and the published key, logs the
// step (the commit point) and writes the final reports. On any problem it
// writes nothing and returns a [RefusedError] listing them all. Run again
// after an interruption, it finishes the reports.
func (c *Campaign) Unblind(ids []age.Identity, custodian ssh.Signer) (*UnblindResult, error) {
	if c.Unblinded() {
		return c.resumeUnblind()
	}
	unlock, err := c.begin(StepUnblind)
	if err != nil {
		if c.Unblinded() {
			return c.resumeUnblind()
		}
		return nil, err
	}
	defer unlock()
	r := c.audit()
	var probs []Problem
	for _, p := range r.Problems {
		if p.Kind == ProblemUncovered && (p.Path == RevealedFile || strings.HasPrefix(p.Path, "unblinded/")) {
			continue // left by an interrupted unblind, removed below
		}
		probs = append(probs, p)
	}
	cmp, err := c.Compare()
	if err != nil {
		return nil, err
	}
	for _, p := range cmp.Incomplete {
		probs = append(probs, Problem{Kind: ProblemMissing, Message: p.Observable + ": incomplete, " + p.Reason})
	}
	probs = append(probs, c.QuorumProblems(c.Signoffs())...)
	if len(probs) > 0 {
		return nil, &RefusedError{Step: StepUnblind, Problems: dedupe(probs)}
	}
	k, err := c.openKey(StepUnblind, ids)
	if err != nil {
		return nil, err
	}
	st := c.State()
	out := map[string][]byte{}
	res := &UnblindResult{}
	for _, s := range c.Slots() {
		os := st.Observables[s.Observable]
		l := os.Latest[s.Team]
		f, err := c.openSealed(StepUnblind, l, ids)
		if err != nil {
			return nil, err
		}
		pub := os.Common[s.Team]
		blinded, err := c.root.ReadFile(pub.Path, maxTable)
		if err != nil {
			return nil, err
		}
		bf, err := c.blindTable(k, f, "common", l.Commitment)
		if err != nil || !bytes.Equal(bf.Encode(), blinded) {
			return nil, &RefusedError{Step: StepUnblind, Problems: []Problem{{Kind: ProblemCommitment, Path: pub.Path, Message: "does not equal the sealed table blinded with K"}}}
		}
		u := *f
		u.Kind = format.Unblinded
		out[s.UnblindedPath()] = u.Encode()
		res.Files = append(res.Files, s.UnblindedPath())
	}
	out[RevealedFile] = format.EncodeKey(k)
	digests := map[string]string{}
	files := c.root.batch()
	for rel, data := range out {
		if c.root.Exists(rel) {
			if err := c.root.Remove(rel); err != nil { // left by an interrupted unblind
				return nil, err
			}
		}
		if err := files.CreateExclusive(rel, data, 0o644); err != nil {
			return nil, err
		}
		digests[rel] = format.Digest(data)
	}
	// the entry makes the files official: only once they are durable
	if err := files.sync(); err != nil {
		return nil, err
	}
	crashPoint("unblind-files")
	var signers []string
	for _, s := range c.Signoffs() {
		if s.Valid {
			signers = append(signers, s.Party)
		}
	}
	salt, _, _ := c.KeyCommitment()
	if err := c.appendEntry(format.Entry{Step: string(StepUnblind), Actor: protocol.RoleCustodian, Files: digests, Data: map[string]string{
		"signed_by": strings.Join(signers, ","), "key_salt": hex.EncodeToString(salt),
	}}, custodian); err != nil {
		return nil, err
	}
	crashPoint("unblind-entry")
	res.Reports, err = c.WriteFinalReports()
	return res, err
}

// resumeUnblind finishes the reports of an unblinded campaign.
func (c *Campaign) resumeUnblind() (*UnblindResult, error) {
	if len(c.missingFinalReports()) == 0 {
		return nil, refuse(StepUnblind, ProblemState, "the campaign is already unblinded")
	}
	res := &UnblindResult{Resumed: true}
	var err error
	res.Reports, err = c.WriteFinalReports()
	return res, err
}
