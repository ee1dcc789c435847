package main

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"tandem/blind/campaign"
)

const signHelp = `Usage:
    tandem sign DIR --as PARTY [--key FILE] [--yes] [--accept-disagreement OBSERVABLE=REASON ...]

Signs off the campaign as it stands. Prints what is signed, in words (each
comparison with its verdict, χ²/ndf and p-value, and what is accepted) and
as the statement (campaign, key commitment, every sealed commitment with
the team that signed it, every blinded digest, the view of the logs, each
comparison with its verdict, the comparison digest of those lines and the
verdict), and asks for confirmation on the terminal. Signs with
the SSH key in FILE, or with ssh-agent when --key is absent. The signature
is an OpenSSH signature in namespace tandem-signoff:
    ssh-keygen -Y verify -n tandem-signoff -f allowed_signers -I PARTY \
        -s signoffs/PARTY.N.statement.sig < signoffs/PARTY.N.statement

Each failing comparison needs its own --accept-disagreement (repeatable):
OBSERVABLE=REASON, or OBSERVABLE/COLUMN=REASON when the observable has
several columns. A reason says in at least three words what differs and
why it is accepted; the statement binds each reason to its comparison.
`

func runSign(e *env, args []string) error {
	fs := newFlags(e, "sign", signHelp)
	var party, keyFile string
	var reasons repeated
	var yes bool
	fs.StringVar(&party, "as", "", "sign as `PARTY` (required)")
	fs.StringVar(&keyFile, "key", "", "SSH private key `FILE` (default: ssh-agent)")
	boolVar(fs, &yes, []string{"yes", "y"}, false, "sign without asking for confirmation")
	fs.Var(&reasons, "accept-disagreement", "sign a failing comparison: `OBSERVABLE=REASON` or OBSERVABLE/COLUMN=REASON (repeatable, one per failing comparison)")
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
	st, cmp, err := c.Draft(party, reasons...)
	if err != nil {
		return campaignErr(err)
	}
	describeSignoff(e.stderr, party, st, cmp)
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
	path, err := c.Sign(st, signer)
	if err != nil {
		return campaignErr(err)
	}
	e.infof("signed off as %s: %s", party, c.Path(path))
	return nil
}

// describeSignoff says in words what a party signs.
func describeSignoff(w io.Writer, party string, st *campaign.Statement, cmp *campaign.Comparison) {
	fmt.Fprintf(w, "tandem: %s signs that these comparisons of blinded tables are the ones to unblind:\n", party)
	for _, e := range cmp.Summary.Entries {
		v := "agree"
		if !e.Pass {
			v = "DISAGREE"
		}
		fmt.Fprintf(w, "  %-8s %s/%s, %s vs %s: χ²/ndf = %s/%d, p-value %s\n", v, e.Observable, e.Column, e.Teams[0], e.Teams[1],
			fmtNum(e.Chi2), e.NDF, fmtNum(e.PValue))
	}
	fmt.Fprintf(w, "  verdict: %s\n", st.Verdict)
	for _, a := range st.Accepted {
		f := strings.SplitN(a, " ", 5)
		fmt.Fprintf(w, "  accepting the disagreement of %s/%s (%s vs %s) because: %s\n", f[0], f[1], f[2], f[3], f[4])
	}
	for _, r := range st.AcceptedRisks {
		fmt.Fprintf(w, "  accepting the protocol's blinding risk for %s\n", r)
	}
}

// repeated is a flag that may be given more than once.
type repeated []string

func (r *repeated) String() string { return strings.Join(*r, ", ") }
func (r *repeated) Set(s string) error {
	*r = append(*r, s)
	return nil
}

func fmtNum(v float64) string {
	if math.IsNaN(v) {
		return "n/a"
	}
	return strings.TrimSpace(fmt.Sprintf("%.4g", v))
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
