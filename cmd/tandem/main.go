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
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"slices"
	"strings"

	"tandem/compare/table"
	"tandem/report"
)

// Version is set at link time with -ldflags "-X main.Version=v1.2.3".
var Version = ""

const usage = `tandem: blind cross-checks between independent analysis chains

Usage:
    tandem compare A B [flags]             compare two tables (CSV, TSV, JSON,
                                           TOML or a ROOT object), no campaign
    tandem sync A B --key COL[,COL…]       match two event tables event by event
                                           and compare their cut flows
    tandem sync A B --campaign DIR         the same, blinding the variables the
                                           protocol names (custodian identity)
    tandem sync merge SUMMARY…             merge the summaries of partitions
    tandem demo DIR [--stop-before STEP]   build a complete demo campaign in DIR

  Campaign steps (DIR holds campaign.toml, the ledger and the tables):
    tandem init DIR [--custodian-key FILE | --custodian RECIPIENT] [--key FILE]
    tandem seal DIR --team T --observable O [--key FILE] [--reason TEXT] [FILE]
                                           (stdin when no FILE; ssh-agent when no --key)
    tandem blind DIR --identity FILE [--key FILE]
    tandem compare DIR [--tables blinded|unblinded]
    tandem status DIR [--format text|json]
    tandem sign DIR --as PARTY [--key FILE] [--yes] [--accept-disagreement REASON]
    tandem amend DIR --as PARTY --reason TEXT [--key FILE] NEW.toml
    tandem unblind DIR --identity FILE [--key FILE]
    tandem verify DIR
    tandem resolve DIR                     remove the branch of a forked log not kept
    tandem report DIR [--format html|markdown|junit|json|text] [-o FILE]
                                           (exit 1 while incomplete, pending
                                           or stale)

    tandem --version                       the version and the revision built

Run "tandem COMMAND -h" for the flags of one command. Flags may come before
or after the positional arguments. With -o FILE and no --format, the file's
extension (.txt .json .md .xml .html) chooses the format. Every report is
stamped with the version, the time and the SHA-256 of each input.

Exit status:
    0  success, or the chains agree
    1  the chains disagree, a step was refused (missing sign-off,
       failed verification), or report found the campaign not complete
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

// inputErr is bad input (exit 2); a reader's hint (such as the flag that
// raises a limit) is printed as a hint line.
func inputErr(err error) error {
	ee := &exitError{code: 2, err: err}
	var te *table.Error
	if errors.As(err, &te) && te.Hint != "" {
		ee.hints = append(ee.hints, te.Hint)
	}
	return ee
}

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
	// stdinDigest, when set, is the SHA-256 of what was read from stdin
	// (for the stamp of a report that compares it).
	stdinDigest func() string
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
		{"amend", runAmend},
		{"unblind", runUnblind},
		{"verify", runVerify},
		{"resolve", runResolve},
		{"report", runReport},
		{"demo", runDemo},
	}
}

func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	if Version != "" {
		report.Version = Version // the reports' stamps name it too
	}
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
			if c.name == "compare" {
				// a table read from stdin is hashed as it is read, for
				// the report's stamp (seal needs the *os.File itself)
				h := sha256.New()
				e.stdin = io.TeeReader(stdin, h)
				e.stdinDigest = func() string { return hex.EncodeToString(h.Sum(nil)) }
			}
			return finish(e, c.run(e, args[1:]))
		}
	}
	fmt.Fprintf(stderr, "tandem: error: unknown command %q\n", report.EscapeText(args[0]))
	if s := suggestCommand(args[0]); s != "" {
		fmt.Fprintf(stderr, "tandem: hint: did you mean \"tandem %s\"?\n", s)
	}
	fmt.Fprintf(stderr, "tandem: hint: run \"tandem -h\" for the list of commands\n")
	return 2
}

// suggestCommand returns the command closest to name, as suggestFlag
// finds flags: one it starts, or one within an edit distance of 1 (2 for
// names of five or more letters); "" if none is.
func suggestCommand(name string) string {
	name = strings.ToLower(strings.TrimLeft(name, "-"))
	best, bestD := "", 1<<30
	limit := 1
	if len(name) >= 5 {
		limit = 2
	}
	for _, c := range commands() {
		d := editDistance(name, c.name)
		if len(name) >= 3 && strings.HasPrefix(c.name, name) {
			d = min(d, 1)
		}
		if d <= limit && d < bestD {
			best, bestD = c.name, d
		}
	}
	return best
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
	// messages quote names from files and flags: their control
	// characters and bidirectional overrides are shown escaped
	msg := escapeLines(err.Error())
	if msg != "" {
		fmt.Fprintf(e.stderr, "tandem: error: %s\n", msg)
	}
	if ee != nil {
		for _, h := range ee.hints {
			fmt.Fprintf(e.stderr, "tandem: hint: %s\n", escapeLines(h))
		}
	}
	return code
}

// escapeLines is [report.EscapeText] line by line: a message may span
// lines, but nothing in it can repaint the terminal or reorder the text.
func escapeLines(s string) string {
	lines := strings.Split(s, "\n")
	for i, l := range lines {
		lines[i] = report.EscapeText(l)
	}
	return strings.Join(lines, "\n")
}

// version is the link-time Version, else the module version and the VCS
// revision the binary was built from (go build in a git checkout records
// it), e.g. "tandem (devel) 7c97d86e2b1f 2026-12-01T18:55:02Z modified
// (go1.26.8)".
func version() string {
	if Version != "" {
		report.Version = Version
	}
	b := report.ReadBuild()
	out := "tandem " + b.Version
	for _, x := range []string{b.Revision, b.Time} {
		if x != "" {
			out += " " + x
		}
	}
	if b.Modified {
		out += " modified"
	}
	if b.Go != "" {
		out += " (" + b.Go + ")"
	}
	return out
}

// newFlags makes a flag set whose help (-h) goes to stderr: the command's
// help text, then its flags written as they are typed (--name, short
// forms as -o), each flag once with its aliases.
func newFlags(e *env, name, help string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(e.stderr)
	fs.Usage = func() {
		fmt.Fprint(e.stderr, help)
		n := 0
		fs.VisitAll(func(*flag.Flag) { n++ })
		if n > 0 {
			fmt.Fprintln(e.stderr, "\nFlags:")
			printFlags(e.stderr, fs)
		}
	}
	return fs
}

// dashed writes a flag name as users type it: -o for one letter, --name
// otherwise.
func dashed(name string) string {
	if len(name) == 1 {
		return "-" + name
	}
	return "--" + name
}

// printFlags lists the flags of fs, aliases of one variable together
// ("-o, --output FILE"), ordered by their long name.
func printFlags(w io.Writer, fs *flag.FlagSet) {
	type entry struct {
		names []string
		f     *flag.Flag
	}
	var entries []*entry
	byTarget := map[uintptr]*entry{}
	fs.VisitAll(func(f *flag.Flag) {
		var key uintptr
		if v := reflect.ValueOf(f.Value); v.Kind() == reflect.Pointer {
			key = v.Pointer()
		}
		if en := byTarget[key]; key != 0 && en != nil && en.f.Usage == f.Usage {
			en.names = append(en.names, f.Name)
			return
		}
		en := &entry{names: []string{f.Name}, f: f}
		entries = append(entries, en)
		if key != 0 {
			byTarget[key] = en
		}
	})
	long := func(en *entry) string {
		return slices.MaxFunc(en.names, func(a, b string) int { return len(a) - len(b) })
	}
	slices.SortFunc(entries, func(a, b *entry) int { return strings.Compare(long(a), long(b)) })
	for _, en := range entries {
		slices.SortFunc(en.names, func(a, b string) int { return len(a) - len(b) })
		names := make([]string, len(en.names))
		for i, n := range en.names {
			names[i] = dashed(n)
		}
		arg, help := flag.UnquoteUsage(en.f)
		if !strings.Contains(en.f.Usage, "`") {
			arg = placeholder(arg)
		}
		// UnquoteUsage takes the first `NAME` as the placeholder; later
		// backquotes are emphasis the help would show raw
		help = strings.ReplaceAll(help, "`", "")
		line := "  " + strings.Join(names, ", ")
		if arg != "" {
			line += " " + arg
		}
		if d := en.f.DefValue; d != "" && d != "0" && d != "false" {
			help += fmt.Sprintf(" (default %s)", d)
		}
		fmt.Fprintf(w, "%s\n        %s\n", line, help)
	}
}

// placeholder replaces the Go type name the flag package shows for a flag
// whose help names no `VALUE` (float, string, int) with a word for what
// is typed.
func placeholder(goType string) string {
	switch goType {
	case "float":
		return "X"
	case "int", "int64", "uint", "uint64":
		return "N"
	case "string":
		return "TEXT"
	case "duration":
		return "DURATION"
	case "value":
		return "VALUE"
	}
	return goType
}

// parse parses flags that may stand before or after positional arguments,
// and returns the positional arguments. "--" ends flag parsing. A bad flag
// is one error line naming it as typed (with a suggestion for a typo); -h
// prints the command's help.
func parse(fs *flag.FlagSet, args []string) ([]string, error) {
	out, usage := fs.Output(), fs.Usage
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	defer func() { fs.SetOutput(out); fs.Usage = usage }()
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				fs.SetOutput(out)
				usage()
				return nil, err
			}
			return nil, &exitError{code: 2, err: flagError(fs, err)}
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

// flagErrors match the messages of the standard flag package.
var flagErrors = []struct {
	re   *regexp.Regexp
	text func(m []string) string
}{
	{regexp.MustCompile(`^flag provided but not defined: -(.*)$`), nil},
	{regexp.MustCompile(`^invalid value ("[^"]*") for flag -([^:]*): (.*)$`), func(m []string) string {
		return fmt.Sprintf("%s: invalid value %s: %s", dashed(m[2]), m[1], m[3])
	}},
	{regexp.MustCompile(`^invalid boolean value ("[^"]*") for -([^:]*): (.*)$`), func(m []string) string {
		return fmt.Sprintf("%s: invalid boolean value %s (it takes no value, or --%s=true|false)", dashed(m[2]), m[1], m[2])
	}},
	{regexp.MustCompile(`^flag needs an argument: -(.*)$`), func(m []string) string {
		return fmt.Sprintf("%s needs a value", dashed(m[1]))
	}},
}

// flagError rewrites an error of the flag package with the flag as typed;
// an unknown flag gets the closest known one as a suggestion.
func flagError(fs *flag.FlagSet, err error) error {
	msg := strings.TrimSpace(err.Error())
	for _, fe := range flagErrors {
		m := fe.re.FindStringSubmatch(msg)
		if m == nil {
			continue
		}
		if fe.text != nil {
			return errors.New(fe.text(m))
		}
		name := m[1]
		if i := strings.IndexByte(name, '='); i >= 0 {
			name = name[:i]
		}
		out := fmt.Sprintf("unknown flag %s", dashed(name))
		if s := suggestFlag(fs, name); s != "" {
			out += fmt.Sprintf(" (did you mean %s?)", dashed(s))
		}
		return errors.New(out)
	}
	return errors.New(msg)
}

// suggestFlag returns the defined flag closest to name: one that starts
// with it, or one within an edit distance of 1 (2 for names of five or more
// letters), counting a swap of neighbours as one edit; "" if none is.
func suggestFlag(fs *flag.FlagSet, name string) string {
	best, bestD := "", 1<<30
	limit := 1
	if len(name) >= 5 {
		limit = 2
	}
	fs.VisitAll(func(f *flag.Flag) {
		d := editDistance(name, f.Name)
		if len(name) >= 3 && strings.HasPrefix(f.Name, name) {
			d = min(d, 1)
		}
		if d <= limit && (d < bestD || d == bestD && len(f.Name) > len(best)) {
			best, bestD = f.Name, d
		}
	})
	return best
}

// editDistance is the optimal-string-alignment distance between a and b:
// insertions, deletions, substitutions and swaps of adjacent letters.
func editDistance(a, b string) int {
	x, y := []rune(a), []rune(b)
	d := make([][]int, len(x)+1)
	for i := range d {
		d[i] = make([]int, len(y)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(x); i++ {
		for j := 1; j <= len(y); j++ {
			cost := 1
			if x[i-1] == y[j-1] {
				cost = 0
			}
			d[i][j] = min(d[i-1][j]+1, d[i][j-1]+1, d[i-1][j-1]+cost)
			if i > 1 && j > 1 && x[i-1] == y[j-2] && x[i-2] == y[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(x)][len(y)]
}

// argCount writes "1 argument", "2 arguments" (for messages such as "got 1
// argument").
func argCount(n int) string {
	if n == 1 {
		return "1 argument"
	}
	return fmt.Sprintf("%d arguments", n)
}

// nameList writes names for people: "kestrel, marmot" (never Go's
// "[kestrel marmot]").
// formatFromPath picks the report format from an output file's extension
// (.json, .md, .html, .xml, .txt; .junit.xml too), for -o FILE without
// --format. ok is false for any other extension.
func formatFromPath(path string) (format string, ok bool) {
	ext := strings.ToLower(filepath.Ext(path))
	switch ext {
	case ".json":
		return "json", true
	case ".md", ".markdown":
		return "markdown", true
	case ".html", ".htm":
		return "html", true
	case ".xml":
		return "junit", true
	case ".txt", ".text":
		return "text", true
	}
	return "", false
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
