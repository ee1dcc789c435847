package blind

import (
	"fmt"
	"strings"
)

// Template returns a commented starting protocol. The parties' keys are
// placeholders that the protocol check refuses until they are filled in.
func Template(campaign, custodian string) string {
	if custodian == "" {
		custodian = "age1...  (the custodian's age recipient or SSH public key)"
	}
	return strings.TrimLeft(fmt.Sprintf(`
# campaign.toml: the protocol of a tandem blinding campaign.
# The schema is described in SPEC.md (format %[1]s). Once "tandem init"
# has started the campaign, its digest is in the ledger: edit nothing after.
format = "%[1]s"
campaign = "%[2]s"
description = "what is measured, and by whom"

# Who holds the blinding key: an age X25519 recipient (age1...) or an SSH
# public key. "tandem init DIR --custodian-key FILE" makes one.
custodian = "%[3]s"

# Parties whose valid, current sign-offs unblinding needs. Every team must
# be listed; reviewers are optional.
quorum = ["team-a", "team-b", "reviewer"]

# Each party signs with an SSH key it already has (paste the .pub line).
[[party]]
name = "team-a"
role = "team"
key = "ssh-ed25519 AAAA... team-a"

[[party]]
name = "team-b"
role = "team"
key = "ssh-ed25519 AAAA... team-b"

[[party]]
name = "reviewer"
role = "reviewer"
key = "ssh-ed25519 AAAA... reviewer"

# One block per binned result. Tables are CSV with the edge columns, and for
# each column its value and its uncertainty columns; nothing else.
[[observable]]
name = "spectrum"
title = "Differential rate"
x_label = "energy [GeV]"
y_label = "rate [1/(s GeV)]"
edges = ["lo", "hi"]

  [[observable.column]]
  name = "rate"
  errors = ["stat", "syst"]     # added in quadrature
  scale = [0.7, 1.4]            # blinding factor s, drawn from this range (> 0)
  shift = [-5.0, 5.0]           # blinding offset o, drawn from this range
  shape = false                 # true: a separate s and o for every bin
  correlation = 0.0             # correlation of the two chains' errors
  max_pull = 3.0                # largest allowed |pull|
  min_p = 0.01                  # smallest allowed p-value
`, FormatV1, campaign, custodian), "\n")
}
