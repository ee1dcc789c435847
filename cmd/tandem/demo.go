package main

import (
	"fmt"
	"path/filepath"
	"slices"
	"strings"

	"tandem/blind/demo"
)

const demoHelp = `Usage:
    tandem demo DIR [--stop-before STEP]

Builds a complete campaign in DIR on invented demo data (a fictional
underground lab's muon telescope; two teams, a reviewer, a custodian) and
runs every step through unblinding and verification. The private keys go
beside the campaign, never inside it: DIR.keys holds each party's SSH key
and the custodian's two secrets, ` + demo.CustodianSigningKey + ` (the SSH
key that signs its steps) and ` + demo.CustodianIdentity + ` (the age
identity that opens sealed tables).
--stop-before leaves the campaign ready for STEP by hand and prints the
commands that take it and every later step; stopped before init or seal,
each team's true tables are left in DIR.tables. Steps:
    init, seal, blind, compare, sign, unblind, verify
`

func runDemo(e *env, args []string) error {
	fs := newFlags(e, "demo", demoHelp)
	var stop string
	fs.StringVar(&stop, "stop-before", "", "stop before `STEP`")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	dir, err := oneDir(pos, "demo")
	if err != nil {
		return err
	}
	if stop != "" && !slices.Contains(demo.Steps, stop) {
		return usageErr("--stop-before %q is not a step (%s)", stop, strings.Join(demo.Steps, ", "))
	}
	res, err := demo.Run(dir, demo.Options{
		StopBefore: stop,
		Log:        func(f string, a ...any) { fmt.Fprintf(e.stdout, f+"\n", a...) },
	})
	if err != nil {
		return campaignErr(err)
	}
	w := e.stdout
	rep := filepath.Join(dir, "reports")
	switch i := slices.Index(demo.Steps, stop); {
	case stop == "" || i > slices.Index(demo.Steps, "unblind"):
		fmt.Fprintf(w, "\nreports: %s (campaign.* blinded, final.* after unblinding; open final.html in a browser)\n", rep)
	case i > slices.Index(demo.Steps, "compare"):
		fmt.Fprintf(w, "\nreports: %s (campaign.* on blinded tables; open campaign.html in a browser)\n", rep)
	}
	fmt.Fprintf(w, "keys: %s (private: keep them out of the campaign folder and out of git)\n", res.Keys)
	if len(res.Next) > 0 {
		fmt.Fprintf(w, "\nto go on by hand, run in order:\n")
		for _, c := range res.Next {
			line := shellJoin(c.Args)
			if c.Refuses != "" {
				line += "    # exits 1: " + c.Refuses
			}
			fmt.Fprintf(w, "    %s\n", line)
		}
	}
	fmt.Fprintf(w, "\ntry: tandem status %s\ntry: tandem verify %s\n(build the tool with: go build -o tandem ./cmd/tandem)\n", shellQuote(dir), shellQuote(dir))
	return nil
}

// shellJoin writes args as one POSIX shell command line.
func shellJoin(args []string) string {
	q := make([]string, len(args))
	for i, a := range args {
		q[i] = shellQuote(a)
	}
	return strings.Join(q, " ")
}

// shellQuote quotes s for a POSIX shell when it holds anything but
// letters, digits and the punctuation shells leave alone: in double quotes
// when s holds an apostrophe and nothing double quotes would expand,
// otherwise in single quotes.
func shellQuote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_./=:,+@%") == "" {
		return s
	}
	if strings.Contains(s, "'") && !strings.ContainsAny(s, "\"$`\\!") {
		return `"` + s + `"`
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
