package main

import (
	"bufio"
	"errors"
	"flag"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"
	"golang.org/x/crypto/ssh/agent"

	"tandem/blind"
	"tandem/blind/safefile"
	"tandem/compare"
	"tandem/compare/input"
	"tandem/compare/rootfile"
	"tandem/compare/table"
	"tandem/report"
)

// identityEnv holds a custodian identity's content, for CI jobs that keep
// it in a secret variable instead of a file.
const identityEnv = "TANDEM_CUSTODIAN_IDENTITY"

// campaignErr maps library errors to exit statuses: refusals exit 1,
// everything else (bad input) exits 2.
func campaignErr(err error) error {
	if err == nil {
		return nil
	}
	var re *blind.RefusedError
	if errors.As(err, &re) {
		msg := re.Error()
		if len(re.Problems) > 1 {
			msg += ":\n  - " + strings.Join(re.Problems, "\n  - ")
		}
		return refused(errors.New(msg))
	}
	return inputErr(err)
}

func oneDir(pos []string, cmd string) (string, error) {
	if len(pos) != 1 {
		return "", withHint(usageErr("%s wants one campaign folder, got %d arguments", cmd, len(pos)), "tandem "+cmd+" DIR")
	}
	return pos[0], nil
}

func openCampaign(dir string) (*blind.Campaign, error) {
	c, err := blind.Open(dir)
	if errors.Is(err, blind.ErrRefused) {
		return nil, campaignErr(err)
	}
	if err != nil {
		if _, statErr := os.Stat(filepath.Join(dir, blind.ProtocolFile)); os.IsNotExist(statErr) {
			return nil, withHint(inputErr(err), "run \"tandem init "+dir+"\" to write a starting protocol")
		}
		return nil, inputErr(err)
	}
	return c, nil
}

const initHelp = `Usage:
    tandem init DIR [--custodian-key FILE | --custodian RECIPIENT] [--campaign ID]

Without DIR/campaign.toml, writes a commented starting protocol there (and,
with --custodian-key, a new custodian identity in FILE, mode 0600) and stops
so you can fill it in. With a filled-in protocol, starts the campaign: draws
the blinding key from the OS random source, seals it to the custodian and
logs its commitment and the protocol's digest. Never overwrites anything.
`

func runInit(e *env, args []string) error {
	fs := newFlags(e, "init", initHelp)
	var keyFile, recipient, id string
	fs.StringVar(&keyFile, "custodian-key", "", "create a new custodian identity in `FILE`")
	fs.StringVar(&recipient, "custodian", "", "custodian's age recipient or SSH public key `RECIPIENT`")
	fs.StringVar(&id, "campaign", "", "campaign `ID` for a new protocol (default: the folder name)")
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
	proto := filepath.Join(dir, blind.ProtocolFile)
	if _, err := os.Stat(proto); err == nil {
		if keyFile != "" || recipient != "" || id != "" {
			return withHint(usageErr("%s exists; --custodian-key, --custodian and --campaign only apply to a new protocol", proto),
				"edit the custodian line of the protocol instead")
		}
		c, err := blind.Init(dir)
		if err != nil {
			return campaignErr(err)
		}
		_, com, _ := c.KeyCommitment()
		e.infof("started campaign %s: blinding key sealed to the custodian in %s", c.Protocol.Campaign, filepath.Join(dir, blind.KeyFile))
		fmt.Fprintf(e.stdout, "key commitment: %x\n", com)
		return nil
	}
	if id == "" {
		abs, _ := filepath.Abs(dir)
		id = filepath.Base(abs)
	}
	if recipient != "" {
		if _, err := blind.ParseRecipient(recipient); err != nil {
			return usageErr("--custodian: %v", err)
		}
	}
	if keyFile != "" {
		if recipient, err = blind.GenerateCustodian(keyFile, time.Now()); err != nil {
			return inputErr(err)
		}
		e.infof("wrote custodian identity %s (mode 0600); keep it secret", keyFile)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return inputErr(err)
	}
	if err := safefile.Create(proto, []byte(blind.Template(id, recipient)), 0o644); err != nil {
		return inputErr(err)
	}
	e.infof("wrote a starting protocol to %s", proto)
	e.infof("hint: fill in the parties, their SSH keys and the observables, then run \"tandem init %s\" again", dir)
	return nil
}

const sealHelp = `Usage:
    tandem seal DIR --team T --observable O [FILE]

Checks a team's true table against the protocol and seals it to the
custodian; only a commitment is logged. Reads standard input when FILE is
absent, so a chain can pipe its output in without writing plaintext:
    ./run-chain | tandem seal DIR --team heron --observable spectrum
Sealing again replaces the earlier version; earlier sign-offs become stale.
`

func runSeal(e *env, args []string) error {
	fs := newFlags(e, "seal", sealHelp)
	var team, obs string
	fs.StringVar(&team, "team", "", "team `NAME` (required)")
	fs.StringVar(&obs, "observable", "", "observable `NAME` (required)")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	if len(pos) < 1 || len(pos) > 2 {
		return withHint(usageErr("seal wants DIR and at most one table file"), "tandem seal DIR --team T --observable O table.csv")
	}
	if team == "" || obs == "" {
		return usageErr("seal needs --team and --observable")
	}
	c, err := openCampaign(pos[0])
	if err != nil {
		return err
	}
	o := c.Protocol.Observable(obs)
	if o == nil {
		return withHint(usageErr("%q is not an observable of campaign %s", obs, c.Protocol.Campaign), "observables: "+observableNames(c.Protocol))
	}
	opt := table.CSVOptions{Lo: o.Edges[0], Hi: o.Edges[1]}
	var t *table.Table
	switch {
	case len(pos) == 2 && rootfile.IsSpec(pos[1]):
		spec := pos[1]
		if _, obj := rootfile.Split(spec); obj == "" && o.Object != "" {
			spec += ":" + o.Object
		}
		if t, err = rootfile.Read(spec); err == nil {
			t, err = o.FromObject(t, rootfile.Value, rootfile.Err)
		}
		if t != nil {
			for _, n := range t.Notes {
				e.warnf("%s", n)
			}
		}
	case len(pos) == 2:
		t, err = input.Read(pos[1], opt)
	default:
		if f, ok := e.stdin.(*os.File); ok {
			if fi, err := f.Stat(); err == nil && fi.Mode()&os.ModeCharDevice != 0 {
				return withHint(usageErr("seal reads the table from standard input, which is a terminal"), "pipe the table in, or name the file")
			}
		}
		t, err = table.ReadCSV("<stdin>", e.stdin, opt)
	}
	if err != nil {
		return inputErr(err)
	}
	com, err := c.Seal(team, obs, t)
	if err != nil {
		return campaignErr(err)
	}
	e.infof("sealed %s/%s (%d bins) to the custodian", team, obs, t.Len())
	fmt.Fprintf(e.stdout, "commitment: %s\n", com)
	return nil
}

func observableNames(p *blind.Protocol) string {
	var n []string
	for _, o := range p.Observables {
		n = append(n, o.Name)
	}
	return strings.Join(n, ", ")
}

// readIdentity loads the custodian identity from --identity or the
// environment; its content never reaches output.
func readIdentity(e *env, path string) ([]age.Identity, error) {
	if path != "" {
		ids, note, err := blind.ReadIdentityFile(path)
		if err != nil {
			return nil, inputErr(err)
		}
		if note != "" {
			e.warnf("%s", note)
		}
		return ids, nil
	}
	if v := os.Getenv(identityEnv); v != "" {
		ids, err := blind.ParseIdentity("$"+identityEnv, []byte(v))
		if err != nil {
			return nil, inputErr(err)
		}
		return ids, nil
	}
	return nil, withHint(usageErr("no custodian identity: give --identity FILE or set %s", identityEnv))
}

const blindHelp = `Usage:
    tandem blind DIR --identity FILE

Custodian step: opens the blinding key and every sealed table not yet
blinded, and writes blinded/TEAM/OBSERVABLE.csv. The identity may instead
come from the TANDEM_CUSTODIAN_IDENTITY environment variable (for CI).
`

// custodianStep parses the arguments of a step that needs the custodian
// identity (blind, unblind), opens the campaign and reads the identity.
func custodianStep(e *env, name, help string, args []string) (*blind.Campaign, []age.Identity, error) {
	fs := newFlags(e, name, help)
	var idFile string
	stringVar(fs, &idFile, []string{"identity", "i"}, "", "custodian identity `FILE` (age or SSH)")
	c, err := campaignArgs(fs, args, name)
	if err != nil {
		return nil, nil, err
	}
	ids, err := readIdentity(e, idFile)
	if err != nil {
		return nil, nil, err
	}
	return c, ids, nil
}

// campaignArgs parses flags around one campaign folder and opens it.
func campaignArgs(fs *flag.FlagSet, args []string, name string) (*blind.Campaign, error) {
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

func runBlind(e *env, args []string) error {
	c, ids, err := custodianStep(e, "blind", blindHelp, args)
	if err != nil {
		return err
	}
	done, err := c.Blind(ids)
	for _, s := range done {
		fmt.Fprintf(e.stdout, "blinded %s\n", s.BlindedPath())
	}
	if err != nil {
		return campaignErr(err)
	}
	if len(done) == 0 {
		e.infof("nothing new to blind")
	}
	return nil
}

func compareCampaign(e *env, dir string, cf *compareFlags) error {
	for _, f := range []string{"value", "error", "correlation", "subset", "cov-a", "cov-b", "cov-ab", "max-pull", "min-p", "abs-tol", "rel-tol", "edges", "name"} {
		if cf.set[f] {
			return withHint(usageErr("--%s does not apply to a campaign", f), "the protocol in campaign.toml declares columns and tolerances")
		}
	}
	c, err := openCampaign(dir)
	if err != nil {
		return err
	}
	kind := blind.Blinded
	if cf.tables == "unblinded" {
		if !c.Unblinded() {
			return refused(errors.New("the campaign is not unblinded yet; only blinded tables can be compared"))
		}
		kind = blind.Unblinded
	}
	s, err := summarize(e, c, kind)
	if err != nil {
		return err
	}
	if len(s.Entries) == 0 {
		return refused(errors.New("nothing to compare yet: each observable needs tables from two teams"))
	}
	out := cf.output
	if out == "" {
		// Campaign mode also keeps a copy under reports/.
		stem := "campaign"
		if kind == blind.Unblinded {
			stem = "final"
		}
		if err := writeReports(c, s, []string{cf.format}, stem); err != nil {
			return err
		}
	}
	if err := emit(e, s, cf.format, out); err != nil {
		return err
	}
	if !s.Pass() {
		return silentFail
	}
	return nil
}

// summarize compares the campaign's tables of one kind, warns about the
// tables still missing and puts the campaign's state on top.
func summarize(e *env, c *blind.Campaign, kind blind.TableKind) (*compare.Summary, error) {
	s, missing, err := c.Compare(kind)
	if err != nil {
		return nil, campaignErr(err)
	}
	for _, m := range missing {
		e.warnf("%s: no %s table yet", m, kind)
	}
	addNotes(c, s)
	return s, nil
}

// addNotes puts the campaign's state on top of a report.
func addNotes(c *blind.Campaign, s *compare.Summary) {
	state := "blinded"
	if c.Unblinded() {
		state = "unblinded"
	}
	s.Notes = append(s.Notes, fmt.Sprintf("campaign %s is %s; %d ledger entries", c.Protocol.Campaign, state, len(c.Ledger)))
	status, _ := c.CheckSignoffs()
	var signed []string
	reasons := map[string][]string{}
	var order []string
	digests := map[string]bool{}
	for _, st := range status {
		if !st.Valid {
			continue
		}
		signed = append(signed, st.Party)
		digests[st.Statement.Comparison] = true
		if r := st.Statement.Accepted; r != "" {
			if reasons[r] == nil {
				order = append(order, r)
			}
			reasons[r] = append(reasons[r], st.Party)
		}
	}
	for _, r := range order {
		s.Notes = append(s.Notes, fmt.Sprintf("disagreement accepted by %s: %s", strings.Join(reasons[r], ", "), r))
	}
	if len(signed) > 0 {
		s.Notes = append(s.Notes, "signed off by "+strings.Join(signed, ", "))
		for d := range digests {
			s.Notes = append(s.Notes, "signed comparison digest "+d)
		}
	} else {
		s.Notes = append(s.Notes, "no valid sign-offs yet")
	}
}

// writeReports writes the summary in each format to DIR/reports/.
func writeReports(c *blind.Campaign, s *compare.Summary, formats []string, stem string) error {
	for _, f := range formats {
		p := filepath.Join(c.Dir, "reports", stem+report.Extension(f))
		err := safefile.WriteFrom(p, 0o644, func(w io.Writer) error { return report.Render(w, f, s, report.Style{}) })
		if err != nil {
			return inputErr(fmt.Errorf("writing %s: %v", p, err))
		}
	}
	return nil
}

const statusHelp = `Usage:
    tandem status DIR

Shows where the campaign stands: what is sealed, blinded and signed, and
what is missing before unblinding.
`

func runStatus(e *env, args []string) error {
	c, err := campaignArgs(newFlags(e, "status", statusHelp), args, "status")
	if err != nil {
		return err
	}
	w := e.stdout
	fmt.Fprintf(w, "campaign %s\n", c.Protocol.Campaign)
	if !c.Started() {
		fmt.Fprintln(w, "  not started: run tandem init on the filled-in protocol")
		return nil
	}
	st := c.State()
	var next []string
	for _, s := range c.Slots() {
		ss := st[s]
		switch {
		case ss == nil:
			fmt.Fprintf(w, "  %-32s missing\n", s)
			next = append(next, fmt.Sprintf("seal %s", s))
		case !ss.Blinded:
			fmt.Fprintf(w, "  %-32s sealed v%d, not blinded\n", s, ss.Version)
			next = append(next, "blind (custodian)")
		default:
			fmt.Fprintf(w, "  %-32s sealed v%d, blinded\n", s, ss.Version)
		}
	}
	status, extra := c.CheckSignoffs()
	for _, s := range status {
		switch {
		case !s.Present:
			fmt.Fprintf(w, "  sign-off %-23s missing\n", s.Party)
		case s.Valid:
			fmt.Fprintf(w, "  sign-off %-23s valid (%s)\n", s.Party, s.Statement.Verdict)
		default:
			fmt.Fprintf(w, "  sign-off %-23s INVALID: %s\n", s.Party, strings.Join(s.Problems, "; "))
		}
	}
	for _, x := range extra {
		fmt.Fprintf(w, "  %s\n", x)
	}
	if c.Unblinded() {
		fmt.Fprintln(w, "state: unblinded")
		return nil
	}
	q := c.QuorumProblems(status)
	if len(next) == 0 && len(q) == 0 {
		fmt.Fprintln(w, "state: ready to unblind")
		return nil
	}
	fmt.Fprintln(w, "state: blinded")
	for _, p := range dedupeStrings(append(next, q...)) {
		fmt.Fprintf(w, "  next: %s\n", p)
	}
	return nil
}

func dedupeStrings(in []string) []string {
	seen := map[string]bool{}
	var out []string
	for _, s := range in {
		if !seen[s] {
			seen[s] = true
			out = append(out, s)
		}
	}
	return out
}

const signHelp = `Usage:
    tandem sign DIR --as PARTY [--key FILE] [--yes] [--accept-disagreement REASON]

Signs off the campaign as it stands. Prints the statement (campaign, key
commitment, every sealed commitment and blinded digest, ledger head,
comparison digest and verdict) and asks for confirmation on the terminal.
Signs with the SSH key in FILE, or with ssh-agent when --key is absent.
The signature is an OpenSSH signature in namespace tandem-signoff:
    ssh-keygen -Y verify -n tandem-signoff -f allowed_signers -I PARTY \
        -s signoffs/PARTY.statement.sig < signoffs/PARTY.statement
`

func runSign(e *env, args []string) error {
	fs := newFlags(e, "sign", signHelp)
	var party, keyFile, reason string
	var yes bool
	fs.StringVar(&party, "as", "", "sign as `PARTY` (required)")
	fs.StringVar(&keyFile, "key", "", "SSH private key `FILE` (default: ssh-agent)")
	boolVar(fs, &yes, []string{"yes", "y"}, false, "sign without asking for confirmation")
	fs.StringVar(&reason, "accept-disagreement", "", "sign a failing comparison, giving the `REASON`")
	c, err := campaignArgs(fs, args, "sign")
	if err != nil {
		return err
	}
	if party == "" {
		return usageErr("sign needs --as PARTY")
	}
	q := c.Protocol.Party(party)
	if q == nil {
		return usageErr("%q is not a party of campaign %s", party, c.Protocol.Campaign)
	}
	signer, err := findSigner(keyFile, q.PublicKey())
	if err != nil {
		return err
	}
	st, _, err := c.NewStatement(party, reason)
	if err != nil {
		return campaignErr(err)
	}
	fmt.Fprint(e.stdout, string(st.Encode()))
	if !yes {
		ok, err := confirm("sign this statement as " + party + "?")
		if err != nil {
			return withHint(usageErr("cannot ask for confirmation: %v", err), "read the statement and pass --yes")
		}
		if !ok {
			return refused(errors.New("not signed"))
		}
	}
	sig, err := blind.SignStatement(signer, st)
	if err != nil {
		return inputErr(err)
	}
	if err := c.SaveSignoff(st, sig); err != nil {
		return campaignErr(err)
	}
	sp, _ := blind.SignoffPaths(party)
	e.infof("signed off as %s: %s", party, filepath.Join(c.Dir, sp))
	return nil
}

// findSigner returns a signer for the party's key from a key file or from
// ssh-agent.
func findSigner(keyFile string, want ssh.PublicKey) (ssh.Signer, error) {
	if keyFile != "" {
		s, err := blind.ReadSigner(keyFile)
		if err != nil {
			return nil, inputErr(err)
		}
		if string(s.PublicKey().Marshal()) != string(want.Marshal()) {
			return nil, refused(fmt.Errorf("%s is not the key the protocol lists for this party (%s)", keyFile, ssh.FingerprintSHA256(want)))
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
	return nil, refused(fmt.Errorf("ssh-agent holds no key %s for this party", ssh.FingerprintSHA256(want)))
}

// confirm asks on the terminal, never on stdin.
func confirm(question string) (bool, error) {
	tty, err := os.OpenFile("/dev/tty", os.O_RDWR, 0)
	if err != nil {
		return false, errors.New("no terminal")
	}
	defer tty.Close()
	fmt.Fprintf(tty, "tandem: %s [y/N] ", question)
	line, err := bufio.NewReader(tty).ReadString('\n')
	if err != nil && line == "" {
		return false, err
	}
	a := strings.ToLower(strings.TrimSpace(line))
	return a == "y" || a == "yes", nil
}

const unblindHelp = `Usage:
    tandem unblind DIR --identity FILE

Custodian step. Checks the ledger chain, every file digest, every sign-off
and the quorum; refuses (exit 1) listing every problem, writing nothing.
If all holds, opens the key, checks it against its commitment, decrypts
every sealed table, checks it against its seal-time commitment, writes
unblinded/TEAM/OBSERVABLE.csv, publishes the key in key.revealed so anyone
can re-check the chain, and writes the final reports.
`

func runUnblind(e *env, args []string) error {
	c, ids, err := custodianStep(e, "unblind", unblindHelp, args)
	if err != nil {
		return err
	}
	slots, err := c.Unblind(ids)
	if err != nil {
		return campaignErr(err)
	}
	for _, s := range slots {
		fmt.Fprintf(e.stdout, "unblinded %s\n", s.UnblindedPath())
	}
	if err := finalReports(c); err != nil {
		return err
	}
	e.infof("final reports in %s", filepath.Join(c.Dir, "reports"))
	return nil
}

// finalReports writes the comparison as signed (blinded) and the true
// values in every format.
func finalReports(c *blind.Campaign) error {
	s, _, err := c.Compare(blind.Unblinded)
	if err != nil {
		return campaignErr(err)
	}
	addNotes(c, s)
	s.Title = "campaign " + c.Protocol.Campaign + ": final (true values)"
	s.Notes = append(s.Notes, "the pulls, χ² and p-values equal those of the blinded comparison that was signed")
	return writeReports(c, s, report.Formats, "final")
}

const verifyHelp = `Usage:
    tandem verify DIR

Checks everything anyone can check without secrets: the ledger chain, every
file digest, every sign-off signature, and after unblinding the quorum, the
key against its commitment, each true table against its seal-time
commitment and each blinded table recomputed from the true table and key.
Exit 0 only if everything holds; otherwise every problem is named (exit 1).
`

func runVerify(e *env, args []string) error {
	fs := newFlags(e, "verify", verifyHelp)
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	dir, err := oneDir(pos, "verify")
	if err != nil {
		return err
	}
	if _, err := os.Stat(filepath.Join(dir, blind.ProtocolFile)); err != nil {
		return inputErr(fmt.Errorf("%s: not a campaign folder (no %s)", dir, blind.ProtocolFile))
	}
	r := blind.Verify(dir)
	for _, n := range r.Notes {
		fmt.Fprintf(e.stdout, "note: %s\n", n)
	}
	for _, p := range r.Problems {
		fmt.Fprintf(e.stdout, "problem: %s\n", p)
	}
	if !r.OK() {
		return refused(fmt.Errorf("verification failed: %d problem(s)", len(r.Problems)))
	}
	fmt.Fprintln(e.stdout, "verified: every check holds")
	return nil
}

const reportHelp = `Usage:
    tandem report DIR [--format html|markdown|junit|json|text] [-o FILE]

Renders the campaign's comparison (blinded tables before unblinding, true
tables after). Without --format, writes every format under DIR/reports/.
`

func runReport(e *env, args []string) error {
	fs := newFlags(e, "report", reportHelp)
	var format, output string
	fs.StringVar(&format, "format", "", "one `FORMAT`: html, markdown, junit, json or text")
	stringVar(fs, &output, []string{"o", "output"}, "", "write to `FILE` instead of stdout")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	dir, err := oneDir(pos, "report")
	if err != nil {
		return err
	}
	if format != "" && !slices.Contains(report.Formats, format) {
		return usageErr("--format %q is not one of %s", format, strings.Join(report.Formats, ", "))
	}
	if format == "" && output != "" {
		return usageErr("-o needs --format")
	}
	c, err := openCampaign(dir)
	if err != nil {
		return err
	}
	kind := blind.Blinded
	if c.Unblinded() {
		kind = blind.Unblinded
	}
	s, err := summarize(e, c, kind)
	if err != nil {
		return err
	}
	if format == "" {
		stem := "campaign"
		if kind == blind.Unblinded {
			stem = "final"
		}
		if err := writeReports(c, s, report.Formats, stem); err != nil {
			return err
		}
		e.infof("wrote %s.{%s} in %s", stem, strings.Join(extensions(), ","), filepath.Join(dir, "reports"))
		return nil
	}
	return emit(e, s, format, output)
}

func extensions() []string {
	var out []string
	for _, f := range report.Formats {
		out = append(out, strings.TrimPrefix(report.Extension(f), "."))
	}
	return out
}
