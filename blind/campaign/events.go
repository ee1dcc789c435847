package campaign

import (
	"filippo.io/age"

	"tandem/compare/events"
)

// StepSync names event-level synchronisation in refusals. It writes no
// ledger entry.
const StepSync Step = "sync"

// EventMaps opens the campaign key with the custodian's identity and
// derives the affine map of every event-level variable the protocol's
// [events] table names blinded (one bin of [protocol.EventVar.MapSpec]).
// Sync applies the same map to both chains, so agreement and cut flows do
// not depend on it. The key itself is neither kept nor returned; nil
// without blinded variables, and then no identity is needed.
func (c *Campaign) EventMaps(ids []age.Identity) (map[string]events.Affine, error) {
	vars := c.Protocol.BlindedVars()
	if len(vars) == 0 {
		return nil, nil
	}
	k, err := c.openKey(StepSync, ids)
	if err != nil {
		return nil, err
	}
	out := make(map[string]events.Affine, len(vars))
	for i := range vars {
		m := k.Map(vars[i].MapSpec(), 1)
		out[vars[i].Name] = events.Affine{S: m.S[0], O: m.O[0]}
	}
	return out, nil
}
