package protocol

import (
	"fmt"
	"strings"

	"tandem/blind"
)

// Template returns a commented starting protocol. The parties' keys are
// placeholders that [Parse] refuses until they are filled in. The default
// blinding ranges are ones the blind step's attack battery passes on
// counting data of any size: factors spread over a factor of 4 and offsets
// as wide as the values (adjust shift to the size of your values).
func Template(campaign, custodian, custodianKey string) string {
	if custodian == "" {
		custodian = "age1...  (the custodian's age recipient or SSH public key)"
	}
	if custodianKey == "" {
		custodianKey = "ssh-ed25519 AAAA... custodian"
	}
	return strings.TrimLeft(fmt.Sprintf(`
# campaign.toml: the protocol of a tandem blinding campaign.
# The schema is described in SPEC.md (format %[1]s). Once "tandem init"
# has started the campaign, its digest is in the ledger and every command
# refuses an edited file; change it only with "tandem amend", which makes
# every earlier sign-off stale.
format = "%[1]s"
campaign = "%[2]s"
description = "what is measured, and by whom"

# Who holds the blinding key: an age X25519 recipient (age1...) or an SSH
# public key. "tandem init DIR --custodian-key FILE" makes one.
custodian = "%[3]s"
# The SSH public key that signs the custodian's steps (init, blind,
# unblind) in the ledger.
custodian_key = "%[4]s"

# Family-wise false-alarm rate across every observable, column and team
# pair of the campaign.
alpha = 0.01

# Parties whose valid, current sign-offs unblinding needs. Every team must
# be listed; reviewers are optional.
quorum = ["team-a", "team-b", "reviewer"]

# Each party signs its seals and sign-offs with an SSH key it already has
# (paste the .pub line).
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
  # Every bin gets its own factor s_i and offset o_i. Uncertainties are
  # scaled by s_i, so pulls, chi-square and p-values do not change.
  scale = [0.5, 2.0]            # blinding factors, drawn from this range (> 0)
  shift = [-1000.0, 1000.0]     # blinding offsets: make this as wide as the values
  # How the two chains' errors are correlated, per error source. Nothing
  # is declared here, so every report warns that the correlation is taken
  # as 0, which makes the test too lenient when the chains share events or
  # systematics. Declare what you know, for each source a number in
  # [-1, 1] or the name of a column with one value per bin, e.g.
  #   correlations = { stat = 0.6, syst = 1.0 }
  # (or "correlation = 0.5" for every source at once). A systematic both
  # teams take from the same source has 1; the statistical errors of two
  # chains that select N_a and N_b events, N_common of them the same, have
  # about N_common/sqrt(N_a N_b).
  # max_pull = 4.0              # optional raw limit on the largest |pull|
  # accept_risk = "why publishing a map an attack breaks is acceptable"
`, blind.Version, campaign, custodian, custodianKey), "\n")
}
