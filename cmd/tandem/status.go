package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"tandem/blind/campaign"
	"tandem/report"
)

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
	if cf.tables == "unblinded" {
		s, err := c.FinalSummary()
		if err != nil {
			return campaignErr(err)
		}
		if err := emitStamped(e, s, cf.format, cf.output, report.NewStamp(c.ReportInputs(true)...)); err != nil {
			return err
		}
		if !s.Pass() {
			return silentFail
		}
		return nil
	}
	s, cmp, err := c.BlindedSummary()
	if err != nil {
		return campaignErr(err)
	}
	for _, p := range cmp.Incomplete {
		e.warnf("%s: incomplete: %s", p.Observable, p.Reason)
	}
	if len(s.Entries) > 0 {
		if err := emitStamped(e, s, cf.format, cf.output, report.NewStamp(c.ReportInputs(false)...)); err != nil {
			return err
		}
	}
	if len(cmp.Incomplete) > 0 {
		if len(s.Entries) == 0 {
			return refused(errors.New("incomplete: no observable has every team's table in the common map yet"))
		}
		return refused(fmt.Errorf("incomplete: %d of %d observables cannot be compared yet", len(cmp.Incomplete), len(c.Protocol.Observables)))
	}
	if !s.Pass() {
		return silentFail
	}
	return nil
}

const statusHelp = `Usage:
    tandem status DIR [--format text|json]

Shows where the campaign stands as this folder holds it: each
observable's state (waiting for seals, sealed, open for comparison,
unblinded) with each team's sealed version, every sign-off, each party's
log (entries and last step, so a site can see what others have pushed
after a pull), and whose turn it is: the next action of each party.
tandem never runs git; pull first to see the other sites' steps.
`

func runStatus(e *env, args []string) error {
	fs := newFlags(e, "status", statusHelp)
	var format string
	fs.StringVar(&format, "format", "text", "output `FORMAT`: text or json")
	c, err := campaignArgs(fs, args, "status")
	if err != nil {
		return err
	}
	if format != "text" && format != "json" {
		return usageErr("--format %q is not text or json", format)
	}
	s, err := c.Status()
	if err != nil {
		return campaignErr(err)
	}
	if format == "json" {
		b, err := json.MarshalIndent(s, "", "  ")
		if err != nil {
			return err
		}
		_, err = e.stdout.Write(append(b, '\n'))
		return err
	}
	w := e.stdout
	fmt.Fprintf(w, "campaign %s: %s\n", s.Campaign, s.State)
	for _, o := range s.Observables {
		var teams []string
		for _, t := range o.Teams {
			switch {
			case t.Version == 0:
				teams = append(teams, t.Team+" missing")
			case o.State == campaign.StateUnblinded:
				teams = append(teams, fmt.Sprintf("%s v%d (unblinded)", t.Team, t.Version))
			default:
				teams = append(teams, fmt.Sprintf("%s v%d (%s)", t.Team, t.Version, publishedWord(t.Published)))
			}
		}
		state := o.State
		if o.State == campaign.StateOpen || o.State == campaign.StateUnblinded {
			state += fmt.Sprintf(" round %d, %s", o.Round, o.Verdict)
		}
		fmt.Fprintf(w, "  %-24s %-28s %s\n", o.Name, state, strings.Join(teams, ", "))
	}
	comparable := false
	for _, o := range s.Observables {
		comparable = comparable || o.State == campaign.StateOpen || o.State == campaign.StateUnblinded
	}
	for _, so := range s.Signoffs {
		switch {
		case !so.Present && !comparable:
			fmt.Fprintf(w, "  sign-off %-15s not due yet (no comparison is open)\n", so.Party)
		case !so.Present:
			fmt.Fprintf(w, "  sign-off %-15s missing\n", so.Party)
		case so.Valid && so.Statement.Verdict == string(campaign.Fail):
			fmt.Fprintf(w, "  sign-off %-15s valid, accepting a failing comparison\n", so.Party)
		case so.Valid:
			fmt.Fprintf(w, "  sign-off %-15s valid\n", so.Party)
		case so.Stale:
			fmt.Fprintf(w, "  sign-off %-15s stale\n", so.Party)
		default:
			fmt.Fprintf(w, "  sign-off %-15s INVALID: %s\n", so.Party, so.Problems[0])
		}
	}
	for _, l := range s.Logs {
		if l.Entries == 0 {
			fmt.Fprintf(w, "  log %-20s no entry yet\n", l.Party)
			continue
		}
		n := fmt.Sprintf("%d entries", l.Entries)
		if l.Entries == 1 {
			n = "1 entry"
		}
		fmt.Fprintf(w, "  log %-20s %s, last: %s at %s\n", l.Party, n, l.Last, l.Time)
	}
	for _, n := range s.Notes {
		fmt.Fprintf(w, "  note: %s\n", n)
	}
	for _, p := range s.Problems {
		fmt.Fprintf(w, "  problem: %s\n", p)
	}
	for _, a := range s.Next {
		fmt.Fprintf(w, "  next: %s\n", a)
	}
	return nil
}

func publishedWord(p string) string {
	switch p {
	case "common":
		return "blinded, common map"
	case "team":
		return "blinded, own map"
	}
	return "sealed, not blinded"
}

const verifyHelp = `Usage:
    tandem verify DIR

Checks everything anyone can check without secrets: every log's chain, the
order of its entries and every entry's signature by the key the protocol
gives its actor, the protocol lock, every file digest, every sign-off
signature, and after unblinding the quorum, the key against its
commitment, each true table against its seal-time commitment and each
blinded table recomputed from the true table and key. Exit 0 only if
everything holds; otherwise every problem is named (exit 1).
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
	if _, err := os.Stat(filepath.Join(dir, campaign.ProtocolFile)); err != nil {
		return inputErr(fmt.Errorf("%s: not a campaign folder (no %s)", dir, campaign.ProtocolFile))
	}
	r := campaign.Verify(dir)
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

const resolveHelp = `Usage:
    tandem resolve DIR

When two clones extended one party's log at the same time (two runs of
the custodian's job, or a party that signed on two machines) and git
merged both, that log has forked and every step is refused. resolve keeps
the branch whose first entry is earliest (then the smallest hash), removes
the entry files of the other branch and the files only they logged, and
lists the steps removed, to be taken again. Every clone that runs it
removes the same files, so commit and push the result as any step. It
refuses when an entry of another log names a removed entry.
`

func runResolve(e *env, args []string) error {
	fs := newFlags(e, "resolve", resolveHelp)
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	dir, err := oneDir(pos, "resolve")
	if err != nil {
		return err
	}
	if _, err := os.Stat(filepath.Join(dir, campaign.ProtocolFile)); err != nil {
		return inputErr(fmt.Errorf("%s: not a campaign folder (no %s)", dir, campaign.ProtocolFile))
	}
	c, err := campaign.OpenAny(dir)
	if err != nil {
		return campaignErr(err)
	}
	res, err := c.Resolve()
	if err != nil {
		return campaignErr(err)
	}
	for _, rel := range res.Entries {
		fmt.Fprintf(e.stdout, "removed entry %s\n", rel)
	}
	for _, rel := range res.Files {
		fmt.Fprintf(e.stdout, "removed %s\n", rel)
	}
	for _, r := range res.Retake {
		e.infof("to take again: %s", r)
	}
	return nil
}

const reportHelp = `Usage:
    tandem report DIR [--format html|markdown|junit|json|text] [-o FILE]

Renders the campaign's comparison (blinded tables before unblinding, true
tables after). Without --format and -o, writes every format under
DIR/reports/ (campaign.* before unblinding, final.* after, the same files
unblind writes). With -o FILE and no --format, the extension chooses the
format: .txt, .json, .md, .xml (JUnit), .html.

Every report is stamped with the tool's version, the time (UTC) and the
SHA-256 of campaign.toml and of each table compared.

Verdicts: pass, fail, and while the campaign is not complete incomplete
(an observable not sealed by every team), pending (a seal waiting for
tandem blind) or stale (a sign-off made on an earlier state).

Exit status: 0 when the campaign is complete (its verdict is pass or
fail), 1 when it is incomplete, pending or stale (the reports are written
and say so), 2 bad usage.
`

func runReport(e *env, args []string) error {
	fs := newFlags(e, "report", reportHelp)
	var format, output string
	fs.StringVar(&format, "format", "", "one `FORMAT`: html, markdown, junit, json or text")
	stringVar(fs, &output, []string{"o", "output"}, "", "write to `FILE` instead of stdout (atomically); its extension chooses the format when --format is not given")
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
	if output == "-" {
		output = ""
		if format == "" {
			format = "text"
		}
	}
	if format == "" && output != "" {
		f, ok := formatFromPath(output)
		if !ok {
			return withHint(usageErr("-o %s: the extension does not name a report format", output),
				"use .txt, .json, .md, .xml (JUnit) or .html, or give --format")
		}
		format = f
	}
	if err := checkOutput(output); err != nil {
		return err
	}
	c, err := openCampaign(dir)
	if err != nil {
		return err
	}
	final := c.Unblinded()
	var s *report.Summary
	if final {
		s, err = c.FinalSummary()
	} else {
		s, _, err = c.BlindedSummary()
	}
	if err != nil {
		return campaignErr(err)
	}
	if format == "" {
		var files []string
		if final {
			files, err = c.WriteReports(s, report.Formats, "final")
		} else {
			files, err = c.WriteReports(s, report.Formats, "campaign")
		}
		if err != nil {
			return campaignErr(err)
		}
		printWarnings(e, s)
		e.infof("wrote %s", strings.Join(files, ", "))
	} else if err := emitStamped(e, s, format, output, report.NewStamp(c.ReportInputs(final)...)); err != nil {
		return err
	}
	return notComplete(s)
}
