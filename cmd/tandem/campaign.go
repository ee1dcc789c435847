package main

import (
	"cmp"
	"errors"
	"flag"
	"fmt"
	"net"
	"os"
	"path/filepath"
	"strings"
	"time"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"
	"golang.org/x/crypto/ssh/agent"

	"tandem/blind/campaign"
	"tandem/blind/keykind"
	"tandem/blind/protocol"
	"tandem/compare/input"
	"tandem/compare/rootfile"
	"tandem/compare/table"
	"tandem/report/outfile"
)

// The custodian identity may come from the environment, for CI jobs:
// identityEnv holds the identity itself (the age or SSH private key text),
// identityFileEnv the path of a file that holds it.
const (
	identityEnv     = "TANDEM_CUSTODIAN_IDENTITY"
	identityFileEnv = "TANDEM_CUSTODIAN_IDENTITY_FILE"
)

// campaignErr maps library errors to exit statuses: refusals exit 1,
// everything else (bad input) exits 2.
func campaignErr(err error) error {
	if err == nil {
		return nil
	}
	var re *campaign.RefusedError
	if errors.As(err, &re) {
		msg := re.Error()
		if len(re.Problems) > 1 {
			var lines []string
			for _, p := range re.Problems {
				lines = append(lines, p.String())
			}
			msg += ":\n  - " + strings.Join(lines, "\n  - ")
		}
		return refused(errors.New(msg))
	}
	return inputErr(err)
}

func oneDir(pos []string, cmd string) (string, error) {
	if len(pos) != 1 {
		return "", withHint(usageErr("%s wants one campaign folder, got %d", cmd, len(pos)), "tandem "+cmd+" DIR")
	}
	return pos[0], nil
}

func openCampaign(dir string) (*campaign.Campaign, error) {
	c, err := campaign.Open(dir)
	if errors.Is(err, campaign.ErrRefused) {
		return nil, campaignErr(err)
	}
	if err != nil {
		if _, statErr := os.Stat(filepath.Join(dir, campaign.ProtocolFile)); os.IsNotExist(statErr) {
			return nil, withHint(inputErr(err), "run \"tandem init "+dir+"\" to write a starting protocol")
		}
		return nil, inputErr(err)
	}
	return c, nil
}

// campaignArgs parses flags around one campaign folder and opens it.
func campaignArgs(fs *flag.FlagSet, args []string, name string) (*campaign.Campaign, error) {
	pos, err := parse(fs, args)
	if err != nil {
		return nil, err
	}
	dir, err := oneDir(pos, name)
	if err != nil {
		return nil, err
	}
	return openCampaign(dir)
}

const initHelp = `Usage:
    tandem init DIR [--custodian-key FILE | --custodian RECIPIENT] [--campaign ID]
    tandem init DIR [--key FILE]

Without DIR/campaign.toml, writes a commented starting protocol there (and,
with --custodian-key, a new custodian age identity in FILE, mode 0600) and
stops so you can fill it in. With a filled-in protocol, starts the
campaign: draws the blinding key from the OS random source, seals it to
the custodian and logs its commitment and the protocol's digest, signed
with the custodian's SSH key (--key FILE, or ssh-agent). Never overwrites
anything.
`

func runInit(e *env, args []string) error {
	fs := newFlags(e, "init", initHelp)
	var keyFile, recipient, id, signKey string
	fs.StringVar(&keyFile, "custodian-key", "", "create a new custodian identity in `FILE`")
	fs.StringVar(&recipient, "custodian", "", "custodian's age recipient or SSH public key `RECIPIENT`")
	fs.StringVar(&id, "campaign", "", "campaign `ID` for a new protocol (default: the folder name)")
	fs.StringVar(&signKey, "key", "", "custodian's SSH signing key `FILE` (default: ssh-agent)")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	dir, err := oneDir(pos, "init")
	if err != nil {
		return err
	}
	if keyFile != "" && recipient != "" {
		return usageErr("--custodian-key and --custodian cannot be used together")
	}
	proto := filepath.Join(dir, campaign.ProtocolFile)
	if _, err := os.Stat(proto); err == nil {
		if keyFile != "" || recipient != "" || id != "" {
			return withHint(usageErr("%s exists; --custodian-key, --custodian and --campaign only apply to a new protocol", proto),
				"edit the custodian line of the protocol instead")
		}
		c, err := openCampaign(dir)
		if err != nil {
			return err
		}
		if c.Started() {
			return refused(errors.New("init refused: the campaign has already started (its log exists)"))
		}
		signer, err := findSigner(signKey, c.Protocol.CustodianPublicKey())
		if err != nil {
			return err
		}
		c, err = campaign.Init(dir, signer)
		if err != nil {
			return campaignErr(err)
		}
		_, com, _ := c.KeyCommitment()
		e.infof("started campaign %s: blinding key sealed to the custodian in %s", c.Protocol.Campaign, filepath.Join(dir, campaign.KeyFile))
		fmt.Fprintf(e.stdout, "key commitment: %x\n", com)
		return nil
	}
	if signKey != "" {
		return usageErr("--key signs the start of a filled-in protocol; %s does not exist yet", proto)
	}
	if id == "" {
		abs, _ := filepath.Abs(dir)
		id = filepath.Base(abs)
	}
	if recipient != "" {
		if _, err := protocol.ParseRecipient(recipient); err != nil {
			return usageErr("--custodian: %v", err)
		}
	}
	if keyFile != "" {
		if campaign.InsideFolder(dir, keyFile) {
			return withHint(usageErr("--custodian-key %s is inside the campaign folder %s; no secret may live there (the folder is shared)", keyFile, dir),
				"write the identity beside the campaign, e.g. --custodian-key "+filepath.Clean(dir)+".keys/custodian-age-identity")
		}
		if recipient, err = campaign.GenerateCustodian(keyFile, time.Now()); err != nil {
			return inputErr(err)
		}
		e.infof("wrote custodian identity %s (mode 0600); keep it secret", keyFile)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return inputErr(err)
	}
	if err := outfile.Create(proto, []byte(protocol.Template(id, recipient, "")), 0o644); err != nil {
		return inputErr(err)
	}
	e.infof("wrote a starting protocol to %s", proto)
	e.infof("hint: fill in the parties, their SSH keys, the custodian's signing key and the observables, then run \"tandem init %s\" again", dir)
	return nil
}

const sealHelp = `Usage:
    tandem seal DIR --team T --observable O [--key FILE] [--reason TEXT] [FILE]
    tandem seal DIR --team T --table O=FILE [--table O=FILE ...] [--key FILE] [--reason TEXT]

Checks a team's true table against the protocol, seals it to the custodian
and logs a commitment to it, signed with the team's SSH key (--key FILE, or
ssh-agent when --key is absent). Reads standard input when FILE is absent,
so a chain can pipe its output in without writing plaintext:
    ./run-chain | tandem seal DIR --team heron --observable spectrum
With --table, repeatable, one command seals many observables: every table
is read and checked first, and nothing is sealed unless all pass; each is
then sealed and logged in turn.
Sealing again adds a new version (each its own file); earlier sign-offs
become stale. A seal after the observable's comparison opened starts a new
round and needs --reason, which every report shows.
`

func runSeal(e *env, args []string) error {
	fs := newFlags(e, "seal", sealHelp)
	var team, obs, keyFile, reason string
	var pairs listFlag
	fs.StringVar(&team, "team", "", "team `NAME` (required)")
	fs.StringVar(&obs, "observable", "", "observable `NAME` (required unless --table is given)")
	fs.Var(&pairs, "table", "an observable and its table file, `O=FILE` (repeatable)")
	fs.StringVar(&keyFile, "key", "", "the team's SSH private key `FILE` (default: ssh-agent)")
	fs.StringVar(&reason, "reason", "", "why this table replaces an opened one (`TEXT`)")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	switch {
	case len(pairs) > 0 && (obs != "" || len(pos) != 1):
		return withHint(usageErr("seal takes either --observable with one table, or --table O=FILE pairs, not both"), "tandem seal DIR --team T --table spectrum=spectrum.csv --table rate=rate.csv")
	case len(pos) < 1 || len(pos) > 2:
		return withHint(usageErr("seal wants DIR and at most one table file"), "tandem seal DIR --team T --observable O table.csv")
	case team == "" || (obs == "" && len(pairs) == 0):
		return usageErr("seal needs --team and --observable (or --table O=FILE)")
	}
	if err := protocol.CleanText(reason); err != nil {
		return usageErr("--reason: %v", err)
	}
	c, err := openCampaign(pos[0])
	if err != nil {
		return err
	}
	q := c.Protocol.Party(team)
	if q == nil || q.Role != protocol.RoleTeam {
		return withHint(usageErr("%q is not a team of campaign %s", team, c.Protocol.Campaign), "teams: "+strings.Join(c.Protocol.Teams(), ", "))
	}
	// Every table is read and checked before anything is sealed.
	type job struct {
		obs string
		t   *table.Table
	}
	var jobs []job
	if len(pairs) == 0 {
		pairs = listFlag{obs + "="}
	}
	seen := map[string]bool{}
	for _, pr := range pairs {
		name, file, ok := strings.Cut(pr, "=")
		if !ok || name == "" || (file == "" && obs == "") {
			return usageErr("--table %q: want O=FILE", pr)
		}
		if seen[name] {
			return usageErr("--table: observable %q given twice", name)
		}
		seen[name] = true
		o := c.Protocol.Observable(name)
		if o == nil {
			return withHint(usageErr("%q is not an observable of campaign %s", name, c.Protocol.Campaign), "observables: "+strings.Join(c.Protocol.ObservableNames(), ", "))
		}
		in := pos
		if file != "" {
			in = []string{pos[0], file}
		}
		t, err := readSealInput(e, o, in)
		if err != nil {
			return err
		}
		if err := c.CheckSeal(team, name, t, reason); err != nil {
			if len(pairs) > 1 {
				return withHint(campaignErr(err), "nothing was sealed")
			}
			return campaignErr(err)
		}
		jobs = append(jobs, job{name, t})
	}
	signer, err := findSigner(keyFile, q.PublicKey())
	if err != nil {
		return err
	}
	for i, j := range jobs {
		res, err := c.Seal(team, j.obs, j.t, signer, reason)
		if err != nil {
			if i > 0 {
				e.warnf("sealed %d of %d tables before this failure; the rest were not sealed", i, len(jobs))
			}
			return campaignErr(err)
		}
		for _, rel := range res.Removed {
			e.warnf("%s: removed a file left by an interrupted seal", rel)
		}
		e.infof("sealed %s/%s v%d (%d bins) to the custodian", team, j.obs, res.Seal.Version, j.t.Len())
		if res.Revision {
			e.warnf("%s was already opened for comparison; this seal starts round %d, which every report shows", j.obs, res.Seal.AfterRound+1)
		}
		if len(res.Stale) > 0 && i == 0 {
			e.warnf("this seal makes the sign-offs of %s stale: they must sign again", strings.Join(res.Stale, ", "))
		}
		if len(jobs) == 1 {
			fmt.Fprintf(e.stdout, "commitment: %s\n", res.Seal.Commitment)
		} else {
			fmt.Fprintf(e.stdout, "commitment: %s %s\n", j.obs, res.Seal.Commitment)
		}
	}
	return nil
}

// readSealInput reads the table to seal from a file, a ROOT object or
// standard input.
func readSealInput(e *env, o *protocol.Observable, pos []string) (*table.Table, error) {
	opt := table.CSVOptions{Lo: o.Edges[0], Hi: o.Edges[1]}
	var t *table.Table
	var err error
	switch {
	case len(pos) == 2 && rootfile.IsSpec(pos[1]):
		spec := pos[1]
		if _, obj := rootfile.Split(spec); obj == "" && o.Object != "" {
			spec += ":" + o.Object
		}
		if t, err = rootfile.Read(spec); err == nil && t.Is2D() {
			// the protocol's edges name two columns: campaign observables are 1-D
			te := table.Errorf(spec, 0, 0, "is a 2-D histogram (cells with x and y edges); a campaign observable is 1-D")
			te.Hint = "compare 2-D tables in table mode: tandem compare FILE_A FILE_B"
			return nil, inputErr(te)
		}
		if err == nil {
			t, err = o.FromObject(t, rootfile.Value, rootfile.Err)
		}
		if t != nil {
			for _, n := range t.Notes {
				e.warnf("%s", n)
			}
		}
	case len(pos) == 2:
		t, err = input.ReadWaiting(pos[1], e.stdin, opt, e.waitNotice())
		if t != nil {
			for _, n := range t.Notes {
				e.warnf("%s", n)
			}
		}
	default:
		if f, ok := e.stdin.(*os.File); ok {
			if isTerminal(f) {
				return nil, withHint(usageErr("seal reads the table from standard input, which is a terminal"), "pipe the table in, or name the file")
			}
		}
		t, err = table.ReadCSV("<stdin>", e.stdin, opt)
	}
	if err != nil {
		return nil, inputErr(err)
	}
	return t, nil
}

// readIdentity loads the custodian identity from --identity or the
// environment; its content never reaches output.
func readIdentity(e *env, path string) ([]age.Identity, []byte, error) {
	if path == "" {
		path = os.Getenv(identityFileEnv)
	}
	if path != "" {
		ids, note, err := campaign.ReadIdentityFile(path)
		if err != nil {
			return nil, nil, inputErr(err)
		}
		if note != "" {
			e.warnf("%s", note)
		}
		data, _ := os.ReadFile(path)
		return ids, data, nil
	}
	if v := os.Getenv(identityEnv); v != "" {
		ids, err := campaign.ParseIdentity("$"+identityEnv, []byte(v))
		if err != nil {
			return nil, nil, inputErr(err)
		}
		return ids, []byte(v), nil
	}
	return nil, nil, withHint(usageErr("no custodian identity: give --identity FILE, or set %s (the identity itself) or %s (its path)", identityEnv, identityFileEnv))
}

// readCustodianIdentity is readIdentity, then a check that the identity is
// of the kind the campaign's custodian recipient opens (an SSH key given
// for an age recipient, or a public key given as an identity, is named).
func readCustodianIdentity(e *env, path, recipient string) ([]age.Identity, []byte, error) {
	ids, raw, err := readIdentity(e, path)
	if err != nil {
		return nil, nil, err
	}
	if err := keykind.CheckIdentity(cmp.Or(path, os.Getenv(identityFileEnv), "$"+identityEnv), raw, recipient); err != nil {
		return nil, nil, inputErr(err)
	}
	return ids, raw, nil
}

const blindHelp = `Usage:
    tandem blind DIR --identity FILE [--key FILE]

Custodian step: opens the blinding key and every sealed table not yet
published. An observable that every team has sealed opens for comparison:
every team's table is published in the common map (blinded/T/O.vN.csv).
Otherwise each new table is published in its team's own map
(blinded/T/O.vN.own.csv), which nobody can compare with another team's.
Each step is signed with the custodian's SSH key: --key FILE, else the
identity itself when it is that SSH key, else ssh-agent.
The identity may come from the environment instead of --identity:
TANDEM_CUSTODIAN_IDENTITY holds the identity itself (for CI secrets),
TANDEM_CUSTODIAN_IDENTITY_FILE the path of a file that holds it.
`

// custodianStep parses the arguments of a step that needs the custodian
// identity (blind, unblind), opens the campaign and reads the identity and
// the signing key.
func custodianStep(e *env, name, help string, args []string) (*campaign.Campaign, []age.Identity, ssh.Signer, error) {
	fs := newFlags(e, name, help)
	var idFile, keyFile string
	stringVar(fs, &idFile, []string{"identity", "i"}, "", "custodian identity `FILE` (age or SSH)")
	fs.StringVar(&keyFile, "key", "", "custodian's SSH signing key `FILE` (default: the identity, or ssh-agent)")
	c, err := campaignArgs(fs, args, name)
	if err != nil {
		return nil, nil, nil, err
	}
	ids, raw, err := readCustodianIdentity(e, idFile, c.Protocol.Custodian)
	if err != nil {
		return nil, nil, nil, err
	}
	want := c.Protocol.CustodianPublicKey()
	if keyFile == "" {
		if s, err := ssh.ParsePrivateKey(raw); err == nil && string(s.PublicKey().Marshal()) == string(want.Marshal()) {
			return c, ids, s, nil
		}
	}
	signer, err := findSigner(keyFile, want)
	if err != nil {
		return nil, nil, nil, err
	}
	return c, ids, signer, nil
}

func runBlind(e *env, args []string) error {
	c, ids, signer, err := custodianStep(e, "blind", blindHelp, args)
	if err != nil {
		return err
	}
	res, err := c.Blind(ids, signer)
	if err != nil {
		return campaignErr(err)
	}
	for _, f := range res.Files {
		fmt.Fprintf(e.stdout, "blinded %s\n", f)
	}
	for _, f := range res.Risks {
		e.warnf("%s/%s: the %s attack recovers the true values to %.3g of the blinding range; published because the protocol accepts the risk", f.Observable, f.Column, f.Attack, f.Precision)
	}
	for _, o := range res.Opened {
		e.infof("%s: every team has sealed; the comparison is open", o)
	}
	for _, o := range c.Protocol.ObservableNames() {
		if w := res.Waiting[o]; len(w) > 0 {
			e.infof("%s: waiting for %s to seal; published tables are in team maps only", o, strings.Join(w, ", "))
		}
	}
	if len(res.Files) == 0 {
		e.infof("nothing new to blind")
	}
	return nil
}

const unblindHelp = `Usage:
    tandem unblind DIR --identity FILE [--key FILE]

Custodian step. Checks the logs (chains, order, every signature), every
file digest, every sign-off and the quorum; refuses (exit 1) listing every
problem, writing nothing. If all holds, opens the key, checks it against
its commitment, decrypts every latest seal, checks it against its seal-time
commitment, writes unblinded/TEAM/OBSERVABLE.csv, publishes the key in
key.revealed so anyone can re-check the chain, and writes the final
reports. Run again after an interruption, it finishes the reports.
`

func runUnblind(e *env, args []string) error {
	c, ids, signer, err := custodianStep(e, "unblind", unblindHelp, args)
	if err != nil {
		return err
	}
	res, err := c.Unblind(ids, signer)
	if err != nil {
		return campaignErr(err)
	}
	for _, f := range res.Files {
		fmt.Fprintf(e.stdout, "unblinded %s\n", f)
	}
	if res.Resumed {
		e.infof("the campaign was already unblinded; finished the final reports an interrupted unblind had left")
	}
	e.infof("final reports in %s", filepath.Join(c.Dir, campaign.ReportsDir))
	return nil
}

const amendHelp = `Usage:
    tandem amend DIR --as PARTY --reason TEXT [--key FILE] NEW.toml

Replaces the locked protocol with NEW.toml as a signed, logged step (PARTY
is a party of the protocol or "custodian"; --key FILE or ssh-agent). Only
observables, tolerances, the quorum and the description may change. Every
earlier sign-off becomes stale.
`

func runAmend(e *env, args []string) error {
	fs := newFlags(e, "amend", amendHelp)
	var actor, reason, keyFile string
	fs.StringVar(&actor, "as", "", "amend as `PARTY` (or custodian)")
	fs.StringVar(&reason, "reason", "", "why the protocol changes (`TEXT`, required)")
	fs.StringVar(&keyFile, "key", "", "SSH private key `FILE` (default: ssh-agent)")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 2 {
		return withHint(usageErr("amend wants DIR and the new protocol file"), "tandem amend DIR --as PARTY --reason TEXT new.toml")
	}
	if actor == "" || strings.TrimSpace(reason) == "" {
		return usageErr("amend needs --as and --reason")
	}
	c, err := openCampaign(pos[0])
	if err != nil {
		return err
	}
	want := c.Protocol.SignerKey(actor)
	if want == nil {
		return usageErr("%q is not a party of campaign %s", actor, c.Protocol.Campaign)
	}
	next, err := os.ReadFile(pos[1])
	if err != nil {
		return inputErr(err)
	}
	signer, err := findSigner(keyFile, want)
	if err != nil {
		return err
	}
	stale, err := c.Amend(actor, next, reason, signer)
	if err != nil {
		return campaignErr(err)
	}
	e.infof("amended the protocol of %s", c.Protocol.Campaign)
	if len(stale) > 0 {
		e.warnf("the amendment makes the sign-offs of %s stale: they must sign again", strings.Join(stale, ", "))
	}
	return nil
}

// findSigner returns a signer for a key from a key file or from ssh-agent.
func findSigner(keyFile string, want ssh.PublicKey) (ssh.Signer, error) {
	if keyFile != "" {
		if err := keykind.CheckSigningKeyFile(keyFile); err != nil {
			return nil, inputErr(err)
		}
		s, err := campaign.ReadSigner(keyFile)
		if err != nil {
			return nil, inputErr(err)
		}
		if string(s.PublicKey().Marshal()) != string(want.Marshal()) {
			return nil, refused(fmt.Errorf("%s is not the key the protocol lists for this role (%s)", keyFile, ssh.FingerprintSHA256(want)))
		}
		return s, nil
	}
	sock := os.Getenv("SSH_AUTH_SOCK")
	if sock == "" {
		return nil, withHint(usageErr("no --key and no ssh-agent (SSH_AUTH_SOCK is unset)"), "pass --key ~/.ssh/id_ed25519")
	}
	conn, err := net.Dial("unix", sock)
	if err != nil {
		return nil, inputErr(fmt.Errorf("ssh-agent: %v", err))
	}
	signers, err := agent.NewClient(conn).Signers()
	if err != nil {
		return nil, inputErr(fmt.Errorf("ssh-agent: %v", err))
	}
	for _, s := range signers {
		if string(s.PublicKey().Marshal()) == string(want.Marshal()) {
			return s, nil
		}
	}
	return nil, refused(fmt.Errorf("ssh-agent holds no key %s for this role", ssh.FingerprintSHA256(want)))
}
