// Package demo builds a complete example campaign on invented data.
//
// The scenario is made up for the demo: the Kettlewell Deep Lab, a
// fictional underground laboratory, runs two independent analysis teams,
// "heron" and "otter", on one year of data from its muon telescope, with
// "ibis" as reviewer. Three observables are compared: the monthly muon
// rate, the zenith-angle distribution and the deposited-energy spectrum.
// The otter chain carries a small invented tilt in the zenith distribution,
// so that observable disagrees and the parties accept it with a reason.
// None of these numbers describes a real measurement.
package demo

import (
	"crypto/ed25519"
	"crypto/rand"
	"encoding/pem"
	"fmt"
	"math"
	mrand "math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"golang.org/x/crypto/ssh"

	"tandem/blind/campaign"
	"tandem/blind/safefile"
	"tandem/compare/table"
)

// Steps are the campaign steps the demo runs, in order.
var Steps = []string{"init", "seal", "blind", "compare", "sign", "unblind", "verify"}

// Options controls Build.
type Options struct {
	// StopBefore names a step of Steps not to run (nor any after it).
	StopBefore string
	// Log receives a few plain lines about each step.
	Log func(format string, args ...any)
}

// Parties of the demo.
var parties = []struct{ name, role string }{{"heron", "team"}, {"otter", "team"}, {"ibis", "reviewer"}}

// Reason the parties give for accepting the zenith disagreement.
const acceptReason = "otter's zenith correction still uses the pre-upgrade tower survey; the tilt is understood and will be fixed in the next pass"

// Build creates the demo campaign in dir, which must not exist or be empty.
// Keys go to dir/keys: an SSH key per party and for the custodian
// ("custodian", which signs the custodian's steps) and the custodian's age
// identity ("custodian.key").
func Build(dir string, opt Options) error {
	logf := opt.Log
	if logf == nil {
		logf = func(string, ...any) {}
	}
	if opt.StopBefore != "" && !slices.Contains(Steps, opt.StopBefore) {
		return fmt.Errorf("unknown step %q (steps: %s)", opt.StopBefore, strings.Join(Steps, ", "))
	}
	if entries, err := os.ReadDir(dir); err == nil && len(entries) > 0 {
		return fmt.Errorf("%s exists and is not empty; the demo needs a new folder", dir)
	}
	keys := filepath.Join(dir, "keys")
	signers := map[string]ssh.Signer{}
	pubs := map[string]string{}
	for _, name := range []string{"heron", "otter", "ibis", "custodian"} {
		s, pub, err := makeSSHKey(filepath.Join(keys, name), name+"@kettlewell-demo")
		if err != nil {
			return err
		}
		signers[name], pubs[name] = s, pub
	}
	rcpt, err := campaign.GenerateCustodian(filepath.Join(keys, "custodian.key"), time.Now())
	if err != nil {
		return err
	}
	logf("made SSH keys for heron, otter, ibis and the custodian, and a custodian age identity, in %s", keys)
	if err := safefile.Create(filepath.Join(dir, campaign.ProtocolFile), []byte(protocolText(rcpt, pubs)), 0o644); err != nil {
		return err
	}
	logf("wrote the protocol %s: 3 observables, quorum heron + otter + ibis", filepath.Join(dir, campaign.ProtocolFile))
	stop := func(step string) bool {
		if step == opt.StopBefore {
			logf("stopped before %q, as asked; the campaign is ready for that step by hand", step)
			return true
		}
		return false
	}
	if stop("init") {
		return nil
	}
	c, err := campaign.Init(dir, signers["custodian"])
	if err != nil {
		return err
	}
	logf("init: drew the blinding key, sealed it to the custodian, logged its commitment")
	if stop("seal") {
		return nil
	}
	ids, _, err := campaign.ReadIdentityFile(filepath.Join(keys, "custodian.key"))
	if err != nil {
		return err
	}
	sealAll := func(team string) error {
		for _, o := range c.Protocol.Observables {
			if _, err := c.Seal(team, o.Name, chainOutput(team, o.Name), signers[team], ""); err != nil {
				return err
			}
		}
		return nil
	}
	if err := sealAll("heron"); err != nil {
		return err
	}
	res, err := c.Blind(ids, signers["custodian"])
	if err != nil {
		return err
	}
	logf("seal: heron sealed its 3 true tables; the custodian published them in heron's own map (%d tables), which nobody can compare with otter's", len(res.Files))
	if err := sealAll("otter"); err != nil {
		return err
	}
	logf("seal: otter sealed its 3 true tables (only commitments are public)")
	if stop("blind") {
		return nil
	}
	res, err = c.Blind(ids, signers["custodian"])
	if err != nil {
		return err
	}
	logf("blind: every team has sealed; the custodian opened %d comparisons, publishing %d tables in the common map under %s", len(res.Opened), len(res.Files), filepath.Join(dir, "blinded"))
	if stop("compare") {
		return nil
	}
	cmp, err := c.Compare()
	if err != nil {
		return err
	}
	if _, err := c.WriteBlindedReports(); err != nil {
		return err
	}
	failed := 0
	for _, e := range cmp.Summary.Entries {
		if !e.Pass {
			failed++
		}
	}
	logf("compare: %d comparisons on blinded tables, %d outside tolerance (the zenith tilt); reports in %s", len(cmp.Summary.Entries), failed, filepath.Join(dir, "reports"))
	if stop("sign") {
		return nil
	}
	for _, p := range parties {
		st, _, err := c.Draft(p.name, acceptReason)
		if err != nil {
			return err
		}
		if _, err := c.Sign(st, signers[p.name]); err != nil {
			return err
		}
	}
	logf("sign: heron, otter and ibis signed statements (SSHSIG) accepting the zenith disagreement with a reason")
	if stop("unblind") {
		return nil
	}
	if _, err := c.Unblind(ids, signers["custodian"]); err != nil {
		return err
	}
	logf("unblind: quorum met; true tables in %s, key published in %s", filepath.Join(dir, "unblinded"), filepath.Join(dir, campaign.RevealedFile))
	if stop("verify") {
		return nil
	}
	r := campaign.Verify(dir)
	if !r.OK() {
		var ps []string
		for _, p := range r.Problems {
			ps = append(ps, p.String())
		}
		return fmt.Errorf("verify found problems in the demo: %s", strings.Join(ps, "; "))
	}
	logf("verify: ledger chain, signatures, digests, sign-offs, quorum and every commitment hold")
	return nil
}

// makeSSHKey writes an OpenSSH ed25519 key pair (private key mode 0600).
func makeSSHKey(path, comment string) (ssh.Signer, string, error) {
	pub, priv, err := ed25519.GenerateKey(rand.Reader)
	if err != nil {
		return nil, "", err
	}
	block, err := ssh.MarshalPrivateKey(priv, comment)
	if err != nil {
		return nil, "", err
	}
	if err := safefile.Create(path, pem.EncodeToMemory(block), 0o600); err != nil {
		return nil, "", err
	}
	sp, err := ssh.NewPublicKey(pub)
	if err != nil {
		return nil, "", err
	}
	line := strings.TrimSpace(string(ssh.MarshalAuthorizedKey(sp))) + " " + comment
	if err := safefile.Create(path+".pub", []byte(line+"\n"), 0o644); err != nil {
		return nil, "", err
	}
	signer, err := ssh.NewSignerFromKey(priv)
	return signer, line, err
}

func protocolText(custodian string, pubs map[string]string) string {
	return fmt.Sprintf(`# Demo protocol: the Kettlewell Deep Lab muon-telescope cross-check.
# Invented scenario and numbers, made by "tandem demo".
format = "tandem/v2"
campaign = "kettlewell-muon-2026"
description = "Kettlewell Deep Lab (fictional): one year of muon-telescope data, two independent chains"
custodian = "%s"
custodian_key = "%s"
quorum = ["heron", "otter", "ibis"]

[[party]]
name = "heron"
role = "team"
key = "%s"

[[party]]
name = "otter"
role = "team"
key = "%s"

[[party]]
name = "ibis"
role = "reviewer"
key = "%s"

[[observable]]
name = "muon_rate"
title = "Monthly muon rate"
x_label = "month of 2026"
y_label = "rate [mHz]"
edges = ["lo", "hi"]

  [[observable.column]]
  name = "rate"
  errors = ["stat", "syst"]
  scale = [0.5, 2.0]
  shift = [-3000.0, 3000.0]
  correlation = 0.5

[[observable]]
name = "zenith"
title = "Zenith-angle distribution"
x_label = "cos(zenith)"
y_label = "events per bin"
edges = ["lo", "hi"]

  [[observable.column]]
  name = "events"
  errors = ["stat", "syst"]
  scale = [0.5, 2.0]
  shift = [-8000.0, 8000.0]
  correlation = 0.5

[[observable]]
name = "energy_spectrum"
title = "Deposited-energy spectrum"
x_label = "deposited energy [MeV]"
y_label = "counts [1/MeV]"
edges = ["lo", "hi"]

  [[observable.column]]
  name = "counts"
  errors = ["stat"]
  scale = [0.5, 2.0]
  shift = [-100000.0, 100000.0]
  correlation = 0.5
`, custodian, pubs["custodian"], pubs["heron"], pubs["otter"], pubs["ibis"])
}

// chainOutput invents a team's table for an observable: a shared "truth"
// with shared event fluctuations, each team's own smaller fluctuations,
// and for otter's zenith table a tilt.
func chainOutput(team, obs string) *table.Table {
	shared := mrand.New(mrand.NewPCG(2026, uint64(len(obs))))
	own := mrand.New(mrand.NewPCG(2026, uint64(len(obs))*31+uint64(len(team))+uint64(team[0])))
	t := &table.Table{Source: team + "/" + obs, LoName: "lo", HiName: "hi"}
	var vals, stat, syst []float64
	add := func(lo, hi, truth, relSyst float64) {
		s := math.Sqrt(truth)
		common := shared.NormFloat64() * s * math.Sqrt(0.5)
		mine := own.NormFloat64() * s * math.Sqrt(0.5)
		t.Lo, t.Hi = append(t.Lo, lo), append(t.Hi, hi)
		vals = append(vals, round(truth+common+mine, 4))
		stat = append(stat, round(s, 4))
		syst = append(syst, round(relSyst*truth, 4))
	}
	switch obs {
	case "muon_rate":
		for m := 0; m < 12; m++ {
			add(float64(m+1), float64(m+2), 2400*(1+0.03*math.Cos(2*math.Pi*(float64(m)-6.5)/12)), 0.004)
		}
		t.Names, t.Cols = []string{"rate", "stat", "syst"}, [][]float64{vals, stat, syst}
	case "zenith":
		for i := 0; i < 16; i++ {
			lo, hi := 0.2+0.05*float64(i), 0.25+0.05*float64(i)
			c := (lo + hi) / 2
			truth := 9000 * c * c
			add(round(lo, 2), round(hi, 2), truth, 0.002)
			if team == "otter" {
				vals[i] = round(vals[i]*(1+0.03*(c-0.6)/0.4), 4)
			}
		}
		t.Names, t.Cols = []string{"events", "stat", "syst"}, [][]float64{vals, stat, syst}
	case "energy_spectrum":
		for i := 0; i < 20; i++ {
			lo, hi := 10*math.Pow(10, float64(i)/8), 10*math.Pow(10, float64(i+1)/8)
			truth := 5e6 * math.Pow((lo+hi)/2, -1.7)
			add(round(lo, 4), round(hi, 4), truth, 0)
		}
		t.Names, t.Cols = []string{"counts", "stat"}, [][]float64{vals, stat}
	}
	return t
}

func round(v float64, digits int) float64 {
	if v == 0 {
		return 0
	}
	p := math.Pow(10, float64(digits)-math.Ceil(math.Log10(math.Abs(v))))
	return math.Round(v*p) / p
}
