package campaign

import (
	"fmt"
	"strings"

	"golang.org/x/crypto/ssh"

	"tandem/blind/internal/format"
	"tandem/blind/protocol"
)

// Amend replaces the locked protocol with next, as a signed, logged step
// by actor (a party or "custodian") with a reason. The amendment may
// change observables, tolerances, the quorum and the description, not the
// parties, their keys or the custodian (see [protocol.Protocol.Compatible]).
// Every earlier sign-off becomes stale. The ledger entry is the commit
// point; campaign.toml is replaced right after it.
func (c *Campaign) Amend(actor string, next []byte, reason string, signer ssh.Signer) ([]string, error) {
	if strings.TrimSpace(reason) == "" {
		return nil, fmt.Errorf("an amendment needs --reason")
	}
	if err := protocol.CleanText(reason); err != nil {
		return nil, fmt.Errorf("--reason: %v", err)
	}
	np, err := protocol.Parse(c.Path(ProtocolFile)+" (amended)", next)
	if err != nil {
		return nil, err
	}
	if err := c.Protocol.Compatible(np); err != nil {
		return nil, refuse(StepAmend, ProblemProtocol, "%v", err)
	}
	if c.Protocol.SignerKey(actor) == nil {
		return nil, fmt.Errorf("%q is not a party of campaign %s", actor, c.Protocol.Campaign)
	}
	unlock, err := c.begin(StepAmend)
	if err != nil {
		return nil, err
	}
	defer unlock()
	digest, err := ProtocolDigest(next)
	if err != nil {
		return nil, err
	}
	if digest == c.protocolDigest() && c.amendProblem() == nil {
		return nil, refuse(StepAmend, ProblemProtocol, "the new protocol means what the one in force means (only comments, white space, line ends or key order differ); there is nothing to amend")
	}
	stale := c.State().unstale()
	if err := c.appendEntry(format.Entry{Step: string(StepAmend), Actor: actor,
		Data: map[string]string{"reason": strings.TrimSpace(reason), "protocol": digest}}, signer); err != nil {
		return nil, err
	}
	if err := c.root.WriteAtomic(ProtocolFile, next); err != nil {
		return nil, fmt.Errorf("the amendment is logged, but replacing %s failed (write the new protocol there by hand): %w", ProtocolFile, err)
	}
	c.Protocol, c.ProtocolBytes = np, next
	c.state, c.cmp, c.signoffs = nil, nil, nil
	return stale, nil
}
