package main

// The walk-through tests run what tandem and its README tell a user to
// type, as printed, through a POSIX shell, with the "tandem" that
// testscript.Main puts on PATH (this test binary). A command "works" when
// it does not exit 2 (usage or input error); exit 1 is a refusal or a
// disagreement, which some steps of the demo show on purpose.

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	"golang.org/x/crypto/ssh"
	"golang.org/x/crypto/ssh/agent"

	"tandem/blind/demo"
	"tandem/blind/keykind"
)

// shellRun runs line with sh -c in dir, with extra environment variables,
// and returns its exit status and output.
func shellRun(t *testing.T, dir string, env []string, line string) (int, string, string) {
	t.Helper()
	cmd := exec.Command("sh", "-c", line)
	cmd.Dir = dir
	cmd.Env = append(os.Environ(), env...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	err := cmd.Run()
	var ee *exec.ExitError
	switch {
	case err == nil:
		return 0, out.String(), errb.String()
	case errors.As(err, &ee):
		return ee.ExitCode(), out.String(), errb.String()
	}
	t.Fatalf("%s: %v", line, err)
	return 0, "", ""
}

// bareEnv keeps a user's ssh-agent and custodian identity out of a
// command: it runs only with what it names.
var bareEnv = []string{"SSH_AUTH_SOCK=", "TANDEM_CUSTODIAN_IDENTITY=", "TANDEM_CUSTODIAN_IDENTITY_FILE=", "NO_COLOR=1"}

func needTandemOnPath(t *testing.T) {
	t.Helper()
	p, err := exec.LookPath("tandem")
	if err != nil {
		t.Fatalf("no tandem on PATH (testscript.Main puts this test binary there): %v", err)
	}
	t.Logf("tandem on PATH: %s", p)
	if _, err := exec.LookPath("sh"); err != nil {
		t.Skip("skipping: no POSIX sh")
	}
}

// byHandCommands parses the commands a stopped demo prints under "to go
// on by hand", each with the exit status it announces (0, or 1 when the
// line says "# exits 1").
func byHandCommands(out string) (lines []string, exits []int) {
	in := false
	sc := bufio.NewScanner(strings.NewReader(out))
	for sc.Scan() {
		l := sc.Text()
		switch {
		case strings.HasPrefix(l, "to go on by hand"):
			in = true
		case in && strings.HasPrefix(l, "    tandem "):
			cmd, note, _ := strings.Cut(strings.TrimSpace(l), "    # ")
			code := 0
			if strings.HasPrefix(note, "exits 1") {
				code = 1
			}
			lines, exits = append(lines, cmd), append(exits, code)
		case in:
			in = false
		}
	}
	return lines, exits
}

// hintRe finds a tandem command in a line of output that offers one
// ("next: …", "hint: …", "try: …"): from "tandem " to the end of the line,
// a closing quote or parenthesis, or a semicolon.
var hintRe = regexp.MustCompile(`(?:^|[\s("'])(tandem [^"');\]]+)`)

// hintCommands extracts the commands offered by lines of output that
// start with "next:", "hint:" or "try:" (after the party name, for
// status's "next: PARTY: …"). A command offered for after an edit by hand
// ("…, then run "tandem init DIR" again") is left out.
func hintCommands(out string) []string {
	var cmds []string
	for _, l := range strings.Split(out, "\n") {
		l = strings.TrimSpace(strings.TrimPrefix(l, "tandem: "))
		if !strings.HasPrefix(l, "next:") && !strings.HasPrefix(l, "hint:") && !strings.HasPrefix(l, "try:") {
			continue
		}
		for _, m := range hintRe.FindAllStringSubmatchIndex(l, -1) {
			// "fill in …, then run "tandem init DIR" again" is for after an
			// edit by hand, not for now
			if strings.HasSuffix(strings.TrimRight(l[:m[2]], ` "'`), "then run") {
				continue
			}
			cmds = append(cmds, strings.TrimSpace(l[m[2]:m[3]]))
		}
	}
	return cmds
}

// startAgent serves an ssh-agent (x/crypto's keyring) holding the private
// keys in files, as a user's agent would, and returns SSH_AUTH_SOCK.
func startAgent(t *testing.T, files ...string) string {
	t.Helper()
	kr := agent.NewKeyring()
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		k, err := ssh.ParseRawPrivateKey(data)
		if err != nil {
			t.Fatal(err)
		}
		if err := kr.Add(agent.AddedKey{PrivateKey: k}); err != nil {
			t.Fatal(err)
		}
	}
	// a short path: socket names are limited to about 100 bytes
	sockDir, err := os.MkdirTemp("", "tag")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(sockDir) })
	sock := filepath.Join(sockDir, "a")
	l, err := net.Listen("unix", sock)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { l.Close() })
	go func() {
		for {
			c, err := l.Accept()
			if err != nil {
				return
			}
			go func() { agent.ServeAgent(kr, c); c.Close() }()
		}
	}()
	return sock
}

// noSecretsInside fails when a file inside the campaign folder dir holds
// an SSH private key or an age identity.
func noSecretsInside(t *testing.T, dir string) {
	t.Helper()
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		if k := keykind.Detect(data); k == keykind.SSHPrivateKey || k == keykind.AgeIdentity {
			t.Errorf("%s inside the campaign folder is %v", p, k)
		}
		return nil
	})
}

// replaceDir replaces the campaign folder old by new in a command line,
// where old is a whole path or a path prefix ending at '/'.
func replaceDir(line, old, new string) string {
	re := regexp.MustCompile(regexp.QuoteMeta(old) + `(/|\s|$)`)
	return re.ReplaceAllString(line, new+"$1")
}

// TestWalkthroughDemo: for every --stop-before step, the demo leaves no
// private key inside the campaign folder, and the commands it prints
// (every "to go on by hand" line, in order, then its "try:" lines) run as
// printed, with the exit status each announces, to a campaign that
// verifies. The "next:" commands of status, run on a copy of the
// campaign, never exit 2 for a user whose ssh-agent holds the parties'
// keys and whose TANDEM_CUSTODIAN_IDENTITY_FILE names the identity (the
// setup the README describes); hints that name the custodian's
// --identity FILE and --key FILE run, with those filled in, with neither.
func TestWalkthroughDemo(t *testing.T) {
	needTandemOnPath(t)
	for _, step := range demo.Steps {
		t.Run(step, func(t *testing.T) {
			work := t.TempDir()
			dir := filepath.Join(work, "c")
			code, out, errs := shellRun(t, work, bareEnv, "tandem demo "+shellQuote(dir)+" --stop-before "+step)
			if code != 0 {
				t.Fatalf("demo --stop-before %s: exit %d\n%s%s", step, code, out, errs)
			}
			noSecretsInside(t, dir)
			if !strings.Contains(out, "keys: "+demo.KeysDir(dir)) {
				t.Errorf("the demo does not say where the keys are:\n%s", out)
			}

			// status's next steps, on a copy, in both environments
			cp := filepath.Join(work, "copy")
			if err := os.CopyFS(cp, os.DirFS(dir)); err != nil {
				t.Fatal(err)
			}
			_, status, _ := shellRun(t, work, bareEnv, "tandem status "+shellQuote(cp))
			hints := hintCommands(status)
			if step == "init" && len(hints) == 0 {
				t.Errorf("status before init offers no command:\n%s", status)
			}
			keys := demo.KeysDir(dir)
			sock := startAgent(t, demo.KeyFile(dir, "heron"), demo.KeyFile(dir, "otter"), demo.KeyFile(dir, "ibis"), demo.KeyFile(dir, "custodian"))
			userEnv := []string{"SSH_AUTH_SOCK=" + sock, "TANDEM_CUSTODIAN_IDENTITY=", "TANDEM_CUSTODIAN_IDENTITY_FILE=" + filepath.Join(keys, demo.CustodianIdentity), "NO_COLOR=1"}
			for _, h := range hints {
				// a hint's FILE placeholders, filled in with the demo's
				// custodian files, run with neither ssh-agent nor the
				// identity variable
				filled := strings.NewReplacer(
					"--identity FILE", "--identity "+shellQuote(filepath.Join(keys, demo.CustodianIdentity)),
					"--key FILE", "--key "+shellQuote(filepath.Join(keys, demo.CustodianSigningKey)),
				).Replace(h)
				if placeholderIn(filled) {
					t.Errorf("status hint %q names a placeholder other than the custodian's --identity FILE and --key FILE", h)
					continue
				}
				if c, o, e := shellRun(t, work, bareEnv, filled); c == 2 {
					t.Errorf("status hint %q, as %q, exits 2 without an ssh-agent or %s:\n%s%s", h, filled, identityFileEnv, o, e)
				}
				if filled != h {
					continue
				}
				if c, o, e := shellRun(t, work, userEnv, h); c == 2 {
					t.Errorf("status hint %q exits 2 with the keys in ssh-agent and %s set:\n%s%s", h, identityFileEnv, o, e)
				}
			}

			// the demo's own commands, in order, as printed
			cmds, exits := byHandCommands(out)
			if step != "" && len(cmds) == 0 {
				t.Fatalf("demo stopped before %s prints no command to go on:\n%s", step, out)
			}
			if step == "seal" {
				for _, team := range []string{"heron", "otter"} {
					if !slices.ContainsFunc(cmds, func(c string) bool {
						return strings.HasPrefix(c, "tandem seal "+shellQuote(dir)+" --team "+team) && strings.Contains(c, demo.TablesDir(dir))
					}) {
						t.Errorf("no seal command for %s's tables in %s:\n%s", team, demo.TablesDir(dir), out)
					}
				}
			}
			for i, c := range cmds {
				code, o, e := shellRun(t, work, bareEnv, c)
				if code != exits[i] {
					t.Fatalf("printed command %q: exit %d, want %d\n%s%s", c, code, exits[i], o, e)
				}
				for _, h := range hintCommands(e) {
					t.Errorf("printed command %q needed a hint: %s", c, h)
				}
			}
			for _, c := range hintCommands(out) {
				if code, o, e := shellRun(t, work, bareEnv, c); code != 0 {
					t.Errorf("printed %q: exit %d\n%s%s", c, code, o, e)
				}
			}
			if code, o, e := shellRun(t, work, bareEnv, "tandem verify "+shellQuote(dir)); code != 0 {
				t.Errorf("verify after the printed commands: exit %d\n%s%s", code, o, e)
			}
			noSecretsInside(t, dir)
		})
	}
}

// staleREADME lists README commands that exit 2 on the demo as written
// today, with why. The test logs them; a command that starts to run is an
// error until it is taken off this list, so the list stays true.
var staleREADME = map[string]string{}

// readmeCommands extracts the commands a user would copy from README.md:
// every line of a code block (indented or fenced) that starts with
// "tandem " or "go run ./cmd/tandem " (joining "\" continuations), and
// every inline code span that starts with "tandem " and names the
// campaign folder DIR or is a top-level flag (spans like `tandem blind`
// or `tandem sync --campaign` name a command in prose and are not run).
func readmeCommands(readme string) []string {
	var out []string
	lines := strings.Split(readme, "\n")
	fenced := false
	for i := 0; i < len(lines); i++ {
		l := lines[i]
		if strings.HasPrefix(strings.TrimSpace(l), "```") {
			fenced = !fenced
			continue
		}
		code := fenced || strings.HasPrefix(l, "    ") || strings.HasPrefix(l, "\t")
		if code {
			s := strings.TrimSpace(l)
			for strings.HasSuffix(s, "\\") && i+1 < len(lines) {
				i++
				s = strings.TrimSpace(strings.TrimSuffix(s, "\\")) + " " + strings.TrimSpace(lines[i])
			}
			if c, _, _ := strings.Cut(s, " #"); strings.HasPrefix(c, "tandem ") || strings.HasPrefix(c, "go run ./cmd/tandem ") {
				out = append(out, strings.TrimSpace(c))
			}
			continue
		}
		for _, m := range regexp.MustCompile("`(tandem [^`]+)`").FindAllStringSubmatch(l, -1) {
			f := strings.Fields(m[1])
			if slices.Contains(f, "DIR") || (len(f) == 2 && strings.HasPrefix(f[1], "--")) {
				out = append(out, m[1])
			}
		}
	}
	return out
}

var placeholderRe = regexp.MustCompile(`^[A-Z][A-Z0-9_]*([=,][A-Z0-9_,=.\[\]]*)?$`)

// readmeSubst turns a README command into one for the demo: DIR is the
// campaign folder (a new one for demo and for init with
// --custodian-key/--custodian); optional [parts] are kept; FILE or any
// value after --identity is the custodian's age identity, after --key the
// actor's SSH key (the team of --team, the party of --as, else the
// custodian's signing key), after -o a new file in the work folder, after
// --custodian-key a new file; PARTY is heron and TEXT a short text. sign
// without --yes asks on the terminal, which a test has not: --yes is added.
// It returns "" and why when the command cannot run on the demo: it has
// "…", "..." or a glob, a placeholder is left (A, B, NAME, T, O=FILE), or
// it reads a file that does not exist.
func readmeSubst(cmd, dir, work string, n int) (string, string) {
	if strings.Contains(cmd, "…") || strings.Contains(cmd, "...") || strings.Contains(cmd, "*") {
		return "", "elides arguments (… or a glob)"
	}
	cmd = strings.TrimPrefix(cmd, "go run ./cmd/tandem ")
	cmd = strings.TrimPrefix(cmd, "tandem ")
	f := strings.Fields(strings.NewReplacer("[", "", "]", "").Replace(cmd))
	if len(f) == 0 {
		return "", "empty"
	}
	sub := f[0]
	fresh := sub == "demo" || (sub == "init" && (slices.Contains(f, "--custodian-key") || slices.Contains(f, "--custodian")))
	campaignDir := dir
	if fresh {
		campaignDir = filepath.Join(work, fmt.Sprintf("new%d", n))
	}
	actor := "custodian"
	for i := 0; i+1 < len(f); i++ {
		if f[i] == "--team" || f[i] == "--as" {
			actor = f[i+1]
			if actor == "PARTY" {
				actor = "heron"
			}
		}
	}
	args := []string{"tandem"}
	for i := 0; i < len(f); i++ {
		a := f[i]
		prev := ""
		if i > 0 {
			prev = f[i-1]
		}
		switch {
		case a == "DIR":
			a = campaignDir
		case strings.HasPrefix(a, "DIR/"):
			a = filepath.Join(campaignDir, a[4:])
		case prev == "--identity" || prev == "-i":
			a = demo.IdentityFile(dir)
		case prev == "--key" && sub != "sync":
			a = demo.KeyFile(dir, actor)
		case prev == "-o" || prev == "--output":
			a = filepath.Join(work, fmt.Sprintf("out%d%s", n, filepath.Ext(a)))
		case prev == "--custodian-key":
			a = filepath.Join(work, fmt.Sprintf("new%d.identity", n))
		case a == "PARTY":
			a = "heron"
		case a == "TEXT":
			a = "walk-through"
		}
		if placeholderRe.MatchString(a) {
			return "", "placeholder " + a
		}
		if ext := filepath.Ext(a); ext != "" && !strings.HasPrefix(a, "-") && prev != "-o" && prev != "--output" && !strings.Contains(a, "=") {
			p := a
			if !filepath.IsAbs(p) {
				p = filepath.Join(work, p)
			}
			if _, err := os.Stat(p); err != nil && slices.Contains([]string{".csv", ".tsv", ".json", ".toml", ".root", ".parquet", ".txt"}, ext) {
				return "", "reads " + a + ", which the demo does not have"
			}
		}
		args = append(args, a)
	}
	if sub == "sign" && !slices.Contains(args, "--yes") && !slices.Contains(args, "-y") {
		args = append(args, "--yes")
	}
	return shellJoin(args), ""
}

// TestWalkthroughREADME: every command of README.md that the demo can
// run (see readmeCommands and readmeSubst for which, and how the demo's
// paths are put in) runs on a copy of the demo stopped before sign
// without exiting 2, except the stale ones listed in staleREADME. The
// hints those commands print are run too.
func TestWalkthroughREADME(t *testing.T) {
	needTandemOnPath(t)
	readme, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	cmds := readmeCommands(string(readme))
	if len(cmds) < 10 {
		t.Fatalf("only %d commands found in README.md: %q", len(cmds), cmds)
	}
	work := t.TempDir()
	base := filepath.Join(work, "base")
	if code, o, e := shellRun(t, work, bareEnv, "tandem demo "+shellQuote(base)+" --stop-before sign"); code != 0 {
		t.Fatalf("demo: %s%s", o, e)
	}
	ran := 0
	for i, c := range cmds {
		dir := filepath.Join(work, fmt.Sprintf("c%d", i))
		if err := os.CopyFS(dir, os.DirFS(base)); err != nil {
			t.Fatal(err)
		}
		// the copy's keys are the base's: the copy has its own folder name
		line, why := readmeSubst(c, base, work, i)
		if why != "" {
			t.Logf("skipped %q: %s", c, why)
			continue
		}
		line = replaceDir(line, base, dir)
		line = strings.ReplaceAll(line, dir+".keys", base+".keys")
		ran++
		code, o, e := shellRun(t, work, bareEnv, line)
		t.Logf("README %q: exit %d", c, code)
		reason, stale := staleREADME[c]
		switch {
		case code == 2 && stale:
			t.Logf("stale README command %q (%s): %s", c, reason, strings.TrimSpace(e))
		case code == 2:
			t.Errorf("README command %q, run as %q: exit 2\n%s%s", c, line, o, e)
		case stale:
			t.Errorf("README command %q now runs (exit %d); take it off staleREADME", c, code)
		}
		for _, h := range hintCommands(e) {
			if strings.ContainsAny(h, "~") || placeholderIn(h) {
				t.Logf("hint %q of %q names a placeholder; not run", h, c)
				continue
			}
			if hc, ho, he := shellRun(t, work, bareEnv, h); hc == 2 {
				t.Errorf("hint %q printed by %q: exit 2\n%s%s", h, line, ho, he)
			}
		}
	}
	if ran < 8 {
		t.Errorf("only %d README commands could run on the demo", ran)
	}
}

func placeholderIn(cmd string) bool {
	for _, f := range strings.Fields(cmd) {
		if placeholderRe.MatchString(f) {
			return true
		}
	}
	return false
}

// TestShellQuote: what the demo prints through shellQuote reaches the
// program as the same argument when a POSIX sh reads it.
func TestShellQuote(t *testing.T) {
	if _, err := exec.LookPath("sh"); err != nil {
		t.Skip("skipping: no POSIX sh")
	}
	args := []string{"plain", "/tmp/a b/c", "otter's zenith; fixed", `a"b`, "it's $HOME `x` \\ !", "", "--key=v,w", "tab\there", "ünïcode", "*?[x]", "a'b\"c"}
	line := "printf '%s\\n' " + shellJoin(args)
	out, err := exec.Command("sh", "-c", line).Output()
	if err != nil {
		t.Fatalf("%s: %v", line, err)
	}
	if got := strings.Split(strings.TrimSuffix(string(out), "\n"), "\n"); !slices.Equal(got, args) {
		t.Errorf("sh read %q\nfrom %s\nwant %q", got, line, args)
	}
}
