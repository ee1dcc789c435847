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
underground lab's muon telescope; two teams, a reviewer, a custodian, keys
in DIR/keys) and runs every step through unblinding and verification.
--stop-before leaves the campaign ready for STEP by hand; steps:
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
	err = demo.Build(dir, demo.Options{
		StopBefore: stop,
		Log:        func(f string, a ...any) { fmt.Fprintf(e.stdout, f+"\n", a...) },
	})
	if err != nil {
		return campaignErr(err)
	}
	rep := filepath.Join(dir, "reports")
	switch i := slices.Index(demo.Steps, stop); {
	case stop == "" || i > slices.Index(demo.Steps, "unblind"):
		fmt.Fprintf(e.stdout, "\nreports: %s (campaign.* blinded, final.* after unblinding; open final.html in a browser)\n", rep)
	case i > slices.Index(demo.Steps, "compare"):
		fmt.Fprintf(e.stdout, "\nreports: %s (campaign.* on blinded tables; open campaign.html in a browser)\n", rep)
	}
	fmt.Fprintf(e.stdout, "try: tandem status %s, tandem verify %s (build the tool with: go build -o tandem ./cmd/tandem)\n", dir, dir)
	return nil
}
