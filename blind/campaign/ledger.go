package campaign

import (
	"errors"
	"fmt"
	"os"
	"time"

	"golang.org/x/crypto/ssh"

	"tandem/blind/internal/format"
	"tandem/blind/internal/sshsig"
)

// appendEntry appends one entry; see [Campaign.appendEntries].
func (c *Campaign) appendEntry(e format.Entry, signer ssh.Signer) error {
	return c.appendEntries([]format.Entry{e}, signer)
}

// appendEntries fills Seq, Prev and Time of each entry, signs it with
// signer (whose key must be the one the protocol gives the actor) and
// appends the lines to the ledger with one O_APPEND write and an fsync:
// the commit point of a step. The caller holds the lock, has reread the
// ledger and has synced the files the entries cover. The ledger is never
// rewritten.
func (c *Campaign) appendEntries(es []format.Entry, signer ssh.Signer) error {
	var out []byte
	if len(c.Ledger) == 0 {
		if c.root.Exists(LedgerFile) {
			return errors.New("the ledger exists but holds no entry; remove it if init was interrupted")
		}
		out = []byte(format.LedgerHeader + "\n")
	}
	prev, seq := format.Genesis, len(c.Ledger)
	if seq > 0 {
		prev = c.Ledger[seq-1].Hash()
	}
	done := make([]format.Entry, 0, len(es))
	for _, e := range es {
		want := c.Protocol.SignerKey(e.Actor)
		if want == nil {
			return fmt.Errorf("%q is not a party of the protocol", e.Actor)
		}
		if signer == nil || string(signer.PublicKey().Marshal()) != string(want.Marshal()) {
			return refuse(Step(e.Step), ProblemSignature, "the signing key is not the one the protocol gives %s (%s)", e.Actor, ssh.FingerprintSHA256(want))
		}
		seq++
		e.Seq, e.Prev = seq, prev
		if e.Time == "" {
			e.Time = c.now().UTC().Format(time.RFC3339)
		}
		sig, err := sshsig.Sign(signer, format.LedgerNamespace, e.SignedBytes())
		if err != nil {
			return err
		}
		e.Sig = sshsig.Flatten(sig)
		line := e.Line()
		prev = format.HashLine(line)
		e.SetHash(prev)
		out = append(append(out, line...), '\n')
		done = append(done, e)
	}
	if err := c.root.Append(LedgerFile, out); err != nil {
		return fmt.Errorf("appending to the ledger: %w", err)
	}
	c.Ledger = append(c.Ledger, done...)
	c.raw = append(c.raw, out...)
	c.state, c.signoffs = nil, nil
	for _, e := range done {
		switch Step(e.Step) {
		case StepSign, StepUnblind:
			// the comparison of the blinded tables is unchanged
		default:
			c.cmp = nil
		}
	}
	return nil
}

// verifyEntrySignatures checks every entry's signature against the key the
// protocol gives its actor.
func (c *Campaign) verifyEntrySignatures() []Problem {
	var probs []Problem
	for i := range c.Ledger {
		e := &c.Ledger[i]
		key := c.Protocol.SignerKey(e.Actor)
		if key == nil {
			continue // replay reports unknown parties
		}
		if e.Sig == "" {
			probs = append(probs, Problem{Kind: ProblemSignature, Path: LedgerFile, Party: e.Actor, Message: fmt.Sprintf("entry %d (%s) is not signed", e.Seq, e.Step)})
			continue
		}
		if err := sshsig.Verify(sshsig.Armor(e.Sig), e.SignedBytes(), format.LedgerNamespace, key); err != nil {
			probs = append(probs, Problem{Kind: ProblemSignature, Path: LedgerFile, Party: e.Actor, Message: fmt.Sprintf("entry %d (%s by %s): %v", e.Seq, e.Step, e.Actor, err)})
		}
	}
	return probs
}

// begin takes the campaign lock for a step and rereads the ledger and the
// protocol; it refuses when the campaign is already unblinded or the
// protocol changed. The caller runs the returned unlock when done.
func (c *Campaign) begin(step Step) (func(), error) {
	unlock, err := c.root.Lock()
	if err != nil {
		return nil, err
	}
	fail := func(err error) (func(), error) {
		unlock()
		return nil, err
	}
	data, err := c.root.ReadFile(ProtocolFile, maxProtocol)
	if err != nil {
		return fail(err)
	}
	if string(data) != string(c.ProtocolBytes) {
		return fail(refuse(step, ProblemProtocol, "%s changed while the step ran", ProtocolFile))
	}
	if err := c.readLedger(); err != nil {
		return fail(err)
	}
	if c.torn > 0 {
		// The partial line was never committed: keep the whole lines, the
		// only time the ledger file is replaced rather than appended to.
		if err := c.root.WriteAtomic(LedgerFile, c.raw); err != nil {
			return fail(fmt.Errorf("removing the partial line an interrupted step left in the ledger: %w", err))
		}
		c.torn = 0
	}
	if p := c.protocolProblem(); p != nil {
		return fail(&RefusedError{Step: step, Problems: []Problem{*p}})
	}
	if step != StepInit && !c.Started() {
		return fail(fmt.Errorf("%s: the campaign has not been started (run tandem init)", c.Dir))
	}
	if c.Unblinded() {
		return fail(refuse(step, ProblemState, "the campaign is already unblinded"))
	}
	return unlock, nil
}

func isNotExist(err error) bool { return errors.Is(err, os.ErrNotExist) }

func unwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}
