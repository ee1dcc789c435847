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
	"tandem/compare/table"
	"tandem/report/outfile"
)

// Steps are the campaign steps the demo runs, in order.
var Steps = []string{"init", "seal", "blind", "compare", "sign", "unblind", "verify"}

// File names inside the keys folder ([KeysDir]). Each party's SSH key is
// named after the party (heron, heron.pub, …). The custodian holds two
// different secrets, named so that one cannot be taken for the other: the
// SSH key that signs the custodian's ledger entries, and the age identity
// that opens the sealed tables and the blinding key.
const (
	CustodianSigningKey = "custodian-ssh-signing-key"
	CustodianIdentity   = "custodian-age-identity"
)

// KeysDir is the folder beside the campaign folder dir that holds the
// demo's private keys: dir's base name with ".keys" appended, in the same
// parent ("/tmp/c" → "/tmp/c.keys"). Private keys never go inside a
// campaign folder, which is meant to be committed and shared.
func KeysDir(dir string) string { return sibling(dir, ".keys") }

// KeyFile is the path of the SSH private key of a party of the demo
// campaign dir ("heron", "otter", "ibis", or "custodian" for the
// custodian's signing key); the public key is beside it with ".pub".
func KeyFile(dir, party string) string {
	if party == "custodian" {
		party = CustodianSigningKey
	}
	return filepath.Join(KeysDir(dir), party)
}

// IdentityFile is the path of the custodian's age identity of the demo
// campaign dir.
func IdentityFile(dir string) string { return filepath.Join(KeysDir(dir), CustodianIdentity) }

// TablesDir is the folder beside dir where the demo leaves each team's
// true tables (TEAM/OBSERVABLE.csv) when it stops before they are sealed:
// a chain's output stays with its team, outside the campaign.
func TablesDir(dir string) string { return sibling(dir, ".tables") }

func sibling(dir, suffix string) string {
	clean := filepath.Clean(dir)
	base := filepath.Base(clean)
	if base == "." || base == ".." || base == string(filepath.Separator) {
		if abs, err := filepath.Abs(clean); err == nil {
			clean, base = abs, filepath.Base(abs)
		}
	}
	return filepath.Join(filepath.Dir(clean), base+suffix)
}

// Options controls Build.
type Options struct {
	// StopBefore names a step of Steps not to run (nor any after it).
	StopBefore string
	// Log receives a few plain lines about each step.
	Log func(format string, args ...any)
}

// Result says where Build put things and what is left to do by hand.
type Result struct {
	Keys string // the keys folder ([KeysDir])
	// Tables is the folder of the teams' true tables ([TablesDir]), or ""
	// when the demo sealed them itself.
	Tables string
	// Next lists, for a demo stopped before a step, the commands that take
	// that step and every later one by hand, in order; each is an argument
	// list starting with "tandem". Nil for a complete demo.
	Next []Command
}

// Command is a command line to run by hand, with a note on what to expect.
type Command struct {
	Args []string
	// Refuses is set when the command is expected to exit 1 on the demo
	// (compare, on the zenith disagreement) and says why.
	Refuses string
}

// Parties of the demo.
var parties = []struct{ name, role string }{{"heron", "team"}, {"otter", "team"}, {"ibis", "reviewer"}}

// Reason the parties give for accepting the zenith disagreement.
const acceptReason = "zenith=otter's zenith correction still uses the pre-upgrade tower survey; the tilt is understood and will be fixed in the next pass"

// Build is [Run] for callers that need only the error.
func Build(dir string, opt Options) error {
	_, err := Run(dir, opt)
	return err
}

// Run creates the demo campaign in dir, which must not exist or be empty,
// and its private keys in [KeysDir](dir), which must not exist or be
// empty either: an SSH key per party, and for the custodian the SSH
// signing key [CustodianSigningKey] and the age identity
// [CustodianIdentity]. Stopped before "init" or "seal", it also writes
// each team's true tables to [TablesDir](dir).
func Run(dir string, opt Options) (*Result, error) {
	logf := opt.Log
	if logf == nil {
		logf = func(string, ...any) {}
	}
	if opt.StopBefore != "" && !slices.Contains(Steps, opt.StopBefore) {
		return nil, fmt.Errorf("unknown step %q (steps: %s)", opt.StopBefore, strings.Join(Steps, ", "))
	}
	keys := KeysDir(dir)
	res := &Result{Keys: keys}
	needTables := opt.StopBefore == "init" || opt.StopBefore == "seal"
	check := []string{dir, keys}
	if needTables {
		res.Tables = TablesDir(dir)
		check = append(check, res.Tables)
	}
	for _, d := range check {
		if fi, err := os.Stat(d); err == nil && !fi.IsDir() {
			return nil, fmt.Errorf("%s exists and is not a folder; the demo needs a new folder %s and, beside it, %s", d, dir, keys)
		}
		if entries, err := os.ReadDir(d); err == nil && len(entries) > 0 {
			return nil, fmt.Errorf("%s exists and is not empty; the demo needs a new folder %s and, beside it, %s", d, dir, keys)
		}
	}
	if err := os.MkdirAll(keys, 0o700); err != nil {
		return nil, err
	}
	signers := map[string]ssh.Signer{}
	pubs := map[string]string{}
	for _, name := range []string{"heron", "otter", "ibis", "custodian"} {
		file := name
		if name == "custodian" {
			file = CustodianSigningKey
		}
		s, pub, err := makeSSHKey(filepath.Join(keys, file), name+"@kettlewell-demo")
		if err != nil {
			return nil, err
		}
		signers[name], pubs[name] = s, pub
	}
	idPath := filepath.Join(keys, CustodianIdentity)
	rcpt, err := campaign.GenerateCustodian(idPath, time.Now())
	if err != nil {
		return nil, err
	}
	logf("made SSH keys for heron, otter and ibis, the custodian's SSH signing key (%s) and its age identity (%s) in %s, outside the campaign folder", CustodianSigningKey, CustodianIdentity, keys)
	if err := outfile.Create(filepath.Join(dir, campaign.ProtocolFile), []byte(protocolText(rcpt, pubs)), 0o644); err != nil {
		return nil, err
	}
	logf("wrote the protocol %s: 3 observables, quorum heron + otter + ibis", filepath.Join(dir, campaign.ProtocolFile))
	if needTables {
		if err := writeTables(res.Tables); err != nil {
			return nil, err
		}
		logf("wrote each team's true tables (its chain's output) to %s", res.Tables)
	}
	stop := func(step string) bool {
		if step == opt.StopBefore {
			res.Next = byHand(dir, keys, res.Tables, step)
			logf("stopped before %q, as asked; the campaign is ready for that step by hand", step)
			return true
		}
		return false
	}
	if stop("init") {
		return res, nil
	}
	c, err := campaign.Init(dir, signers["custodian"])
	if err != nil {
		return nil, err
	}
	logf("init: drew the blinding key, sealed it to the custodian, logged its commitment")
	if stop("seal") {
		return res, nil
	}
	ids, _, err := campaign.ReadIdentityFile(idPath)
	if err != nil {
		return nil, err
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
		return nil, err
	}
	br, err := c.Blind(ids, signers["custodian"])
	if err != nil {
		return nil, err
	}
	logf("seal: heron sealed its 3 true tables; the custodian published them in heron's own map (%d tables), which nobody can compare with otter's", len(br.Files))
	if err := sealAll("otter"); err != nil {
		return nil, err
	}
	logf("seal: otter sealed its 3 true tables (only commitments are public)")
	if stop("blind") {
		return res, nil
	}
	br, err = c.Blind(ids, signers["custodian"])
	if err != nil {
		return nil, err
	}
	logf("blind: every team has sealed; the custodian opened %d comparisons, publishing %d tables in the common map under %s", len(br.Opened), len(br.Files), filepath.Join(dir, "blinded"))
	if stop("compare") {
		return res, nil
	}
	cmp, err := c.Compare()
	if err != nil {
		return nil, err
	}
	if _, err := c.WriteBlindedReports(); err != nil {
		return nil, err
	}
	failed := 0
	for _, e := range cmp.Summary.Entries {
		if !e.Pass {
			failed++
		}
	}
	logf("compare: %d comparisons on blinded tables, %d outside tolerance (the zenith tilt); reports in %s", len(cmp.Summary.Entries), failed, filepath.Join(dir, "reports"))
	if stop("sign") {
		return res, nil
	}
	for _, p := range parties {
		st, _, err := c.Draft(p.name, acceptReason)
		if err != nil {
			return nil, err
		}
		if _, err := c.Sign(st, signers[p.name]); err != nil {
			return nil, err
		}
	}
	logf("sign: heron, otter and ibis signed statements (SSHSIG) accepting the zenith disagreement with a reason")
	if stop("unblind") {
		return res, nil
	}
	if _, err := c.Unblind(ids, signers["custodian"]); err != nil {
		return nil, err
	}
	logf("unblind: quorum met; true tables in %s, key published in %s", filepath.Join(dir, "unblinded"), filepath.Join(dir, campaign.RevealedFile))
	if stop("verify") {
		return res, nil
	}
	r := campaign.Verify(dir)
	if !r.OK() {
		var ps []string
		for _, p := range r.Problems {
			ps = append(ps, p.String())
		}
		return nil, fmt.Errorf("verify found problems in the demo: %s", strings.Join(ps, "; "))
	}
	logf("verify: ledger chain, signatures, digests, sign-offs, quorum and every commitment hold")
	return res, nil
}

// writeTables writes every team's true table of every observable to
// tables/TEAM/OBSERVABLE.csv.
func writeTables(tables string) error {
	for _, p := range parties {
		if p.role != "team" {
			continue
		}
		for _, o := range observables {
			var b strings.Builder
			if err := chainOutput(p.name, o).WriteCSV(&b); err != nil {
				return err
			}
			if err := outfile.Create(filepath.Join(tables, p.name, o+".csv"), []byte(b.String()), 0o644); err != nil {
				return err
			}
		}
	}
	return nil
}

// observables of the demo protocol, in declared order.
var observables = []string{"muon_rate", "zenith", "energy_spectrum"}

// byHand lists the commands that take step and every later one by hand.
func byHand(dir, keys, tables, step string) []Command {
	key := func(name string) string { return filepath.Join(keys, name) }
	custodian := []string{"--identity", key(CustodianIdentity), "--key", key(CustodianSigningKey)}
	var out []Command
	add := func(refuses string, args ...string) {
		out = append(out, Command{Args: append([]string{"tandem"}, args...), Refuses: refuses})
	}
	for _, s := range Steps[slices.Index(Steps, step):] {
		switch s {
		case "init":
			add("", "init", dir, "--key", key(CustodianSigningKey))
		case "seal":
			for _, p := range parties {
				if p.role != "team" {
					continue
				}
				args := []string{"seal", dir, "--team", p.name}
				for _, o := range observables {
					args = append(args, "--table", o+"="+filepath.Join(tables, p.name, o+".csv"))
				}
				add("", append(args, "--key", key(p.name))...)
			}
		case "blind":
			add("", append([]string{"blind", dir}, custodian...)...)
		case "compare":
			add("zenith disagrees on purpose", "compare", dir)
			add("", "report", dir)
		case "sign":
			for _, p := range parties {
				add("", "sign", dir, "--as", p.name, "--key", key(p.name), "--yes", "--accept-disagreement", acceptReason)
			}
		case "unblind":
			add("", append([]string{"unblind", dir}, custodian...)...)
		case "verify":
			add("", "verify", dir)
		}
	}
	return out
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
	if err := outfile.Create(path, pem.EncodeToMemory(block), 0o600); err != nil {
		return nil, "", err
	}
	sp, err := ssh.NewPublicKey(pub)
	if err != nil {
		return nil, "", err
	}
	line := strings.TrimSpace(string(ssh.MarshalAuthorizedKey(sp))) + " " + comment
	if err := outfile.Create(path+".pub", []byte(line+"\n"), 0o644); err != nil {
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
  scale = [0.1, 10.0]
  shift = [-10000.0, 10000.0]
  accept_risk = "the monthly rate is flat to a few per cent, so its published errors give its level away; the blinded quantity is the seasonal modulation, which they do not reveal"
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
  scale = [0.1, 10.0]
  shift = [-30000.0, 30000.0]
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
  scale = [0.1, 10.0]
  shift = [-400000.0, 400000.0]
  correlation = 0.5
`, custodian, pubs["custodian"], pubs["heron"], pubs["otter"], pubs["ibis"])
}

// ChainOutput is the demo's invented true table of a team for an
// observable (for tests that check the demo's blinding).
func ChainOutput(team, obs string) *table.Table { return chainOutput(team, obs) }

// Protocol is the demo's protocol text for a custodian recipient and
// public keys by party name (heron, otter, ibis, custodian).
func Protocol(custodian string, pubs map[string]string) string { return protocolText(custodian, pubs) }

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
