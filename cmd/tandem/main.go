// Command tandem runs blind cross-checks between two analysis chains: it
// compares binned results with pull statistics, hides the true values behind
// a secret blinding map and hash commitments, and reveals them only after
// the declared quorum has signed off.
//
// This file and its siblings only parse flags and wire the packages
// together; the work is done in compare, blind and report.
//
// Message rules: stdout carries only data (reports, statements, status).
// Everything else goes to stderr prefixed "tandem: " with a level
// ("error:", "warning:", "hint:"), lowercase and without a final period.
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"runtime/debug"
	"strings"

	"tandem/compare/table"
)

// Version is set at link time with -ldflags "-X main.Version=v1.2.3".
var Version = ""

const usage = `tandem: blind cross-checks between independent analysis chains

Usage:
    tandem compare A.csv B.csv [flags]     compare two tables, no campaign needed
    tandem demo DIR [--stop-before STEP]   build a complete demo campaign in DIR

  Campaign steps (DIR holds campaign.toml, the ledger and the tables):
    tandem init DIR [--custodian-key FILE | --custodian RECIPIENT]
    tandem seal DIR --team T --observable O [FILE]   (stdin when no FILE)
    tandem blind DIR --identity FILE
    tandem compare DIR [--tables blinded|unblinded]
    tandem status DIR
    tandem sign DIR --as PARTY [--key FILE] [--yes] [--accept-disagreement REASON]
    tandem unblind DIR --identity FILE
    tandem verify DIR
    tandem report DIR [--format html|markdown|junit|json|text] [-o FILE]

Run "tandem COMMAND -h" for the flags of one command. Flags may come before
or after the positional arguments.

Exit status:
    0  success, or the chains agree
    1  the chains disagree, or a step was refused (missing sign-off,
       failed verification)
    2  bad usage or bad input (the message names the file, line and column)
`

func main() {
	os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}

// exitError carries an exit status and hints to main.
type exitError struct {
	code  int
	err   error
	hints []string
}

func (e *exitError) Error() string { return e.err.Error() }
func (e *exitError) Unwrap() error { return e.err }

// usageErr is bad usage (exit 2).
func usageErr(format string, args ...any) error {
	return &exitError{code: 2, err: fmt.Errorf(format, args...)}
}

// inputErr is bad input (exit 2).
func inputErr(err error) error { return &exitError{code: 2, err: err} }

// refused is a refused step or a disagreement (exit 1).
func refused(err error) error { return &exitError{code: 1, err: err} }

func withHint(err error, hints ...string) error {
	var ee *exitError
	if errors.As(err, &ee) {
		ee.hints = append(ee.hints, hints...)
		return ee
	}
	return &exitError{code: 2, err: err, hints: hints}
}

// silentFail is returned when the output already says why (a failing
// comparison): exit 1 with no extra message.
var silentFail = &exitError{code: 1, err: errors.New("")}

type env struct {
	stdin          io.Reader
	stdout, stderr io.Writer
}

func (e *env) warnf(format string, args ...any) {
	fmt.Fprintf(e.stderr, "tandem: warning: "+format+"\n", args...)
}

func (e *env) infof(format string, args ...any) {
	fmt.Fprintf(e.stderr, "tandem: "+format+"\n", args...)
}

type command struct {
	name string
	run  func(e *env, args []string) error
}

func commands() []command {
	return []command{
		{"compare", runCompare},
		{"sync", runSync},
		{"init", runInit},
		{"seal", runSeal},
		{"blind", runBlind},
		{"status", runStatus},
		{"sign", runSign},
		{"unblind", runUnblind},
		{"verify", runVerify},
		{"report", runReport},
		{"demo", runDemo},
	}
}

func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	e := &env{stdin: stdin, stdout: stdout, stderr: stderr}
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return 2
	}
	switch args[0] {
	case "-h", "-help", "--help", "help":
		fmt.Fprint(stdout, usage)
		return 0
	case "-version", "--version", "version":
		fmt.Fprintln(stdout, version())
		return 0
	}
	for _, c := range commands() {
		if c.name == args[0] {
			return finish(e, c.run(e, args[1:]))
		}
	}
	fmt.Fprintf(stderr, "tandem: error: unknown command %q\n", args[0])
	fmt.Fprintf(stderr, "tandem: hint: run \"tandem -h\" for the list of commands\n")
	return 2
}

func finish(e *env, err error) int {
	if err == nil {
		return 0
	}
	if errors.Is(err, flag.ErrHelp) {
		return 0
	}
	code := 2
	var ee *exitError
	var te *table.Error
	switch {
	case errors.As(err, &ee):
		code = ee.code
		if ee == silentFail {
			return code
		}
	case errors.As(err, &te):
		code = 2
	default:
		fmt.Fprintf(e.stderr, "tandem: internal error: %v\n", err)
		return 2
	}
	msg := err.Error()
	if msg != "" {
		fmt.Fprintf(e.stderr, "tandem: error: %s\n", msg)
	}
	if ee != nil {
		for _, h := range ee.hints {
			fmt.Fprintf(e.stderr, "tandem: hint: %s\n", h)
		}
	}
	return code
}

func version() string {
	if Version != "" {
		return Version
	}
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" {
		return bi.Main.Version
	}
	return "(devel)"
}

// newFlags makes a flag set whose errors and help go to stderr.
func newFlags(e *env, name, help string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(e.stderr)
	fs.Usage = func() {
		fmt.Fprint(e.stderr, help)
		fmt.Fprintln(e.stderr, "\nFlags:")
		fs.PrintDefaults()
	}
	return fs
}

// parse parses flags that may stand before or after positional arguments,
// and returns the positional arguments. "--" ends flag parsing.
func parse(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return nil, err
			}
			return nil, &exitError{code: 2, err: errors.New(strings.TrimSpace(err.Error()))}
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, nil
		}
		// fs.Parse stops at the first non-flag or after "--".
		consumed := len(args) - len(rest)
		if consumed > 0 && args[consumed-1] == "--" {
			return append(pos, rest...), nil
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}

// listFlag is a repeatable string flag.
type listFlag []string

func (l *listFlag) String() string { return strings.Join(*l, ",") }
func (l *listFlag) Set(v string) error {
	*l = append(*l, v)
	return nil
}

// stringVar registers a string flag under several names.
func stringVar(fs *flag.FlagSet, p *string, names []string, def, help string) {
	for _, n := range names {
		fs.StringVar(p, n, def, help)
	}
}

func boolVar(fs *flag.FlagSet, p *bool, names []string, def bool, help string) {
	for _, n := range names {
		fs.BoolVar(p, n, def, help)
	}
}
