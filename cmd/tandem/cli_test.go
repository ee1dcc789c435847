package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"filippo.io/age"

	"tandem/blind/campaign"
	"tandem/blind/demo"
	"tandem/compare/table"
)

func runCLI(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, strings.NewReader(""), &out, &errb)
	return code, out.String(), errb.String()
}

// TestSignWithSSHAgent signs with a key held by OpenSSH's ssh-agent, as
// users do when --key is absent.
func TestSignWithSSHAgent(t *testing.T) {
	agentBin, err := exec.LookPath("ssh-agent")
	if err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("ssh-agent is required in CI but not installed")
		}
		t.Skip("skipping: ssh-agent is not installed (apt-get install openssh-client)")
	}
	dir := filepath.Join(t.TempDir(), "c")
	if err := demo.Build(dir, demo.Options{StopBefore: "sign"}); err != nil {
		t.Fatal(err)
	}
	sock := filepath.Join(t.TempDir(), "agent.sock")
	agentCmd := exec.Command(agentBin, "-D", "-a", sock)
	if err := agentCmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer agentCmd.Process.Kill()
	for i := 0; i < 100; i++ {
		if _, err := os.Stat(sock); err == nil {
			break
		}
		exec.Command("sleep", "0.05").Run()
	}
	add := exec.Command("ssh-add", filepath.Join(dir, "keys", "otter"))
	add.Env = append(os.Environ(), "SSH_AUTH_SOCK="+sock)
	if out, err := add.CombinedOutput(); err != nil {
		t.Fatalf("ssh-add: %v\n%s", err, out)
	}
	t.Setenv("SSH_AUTH_SOCK", sock)
	code, _, stderr := runCLI(t, "sign", dir, "--as", "otter", "--yes", "--accept-disagreement", "tilt understood")
	if code != 0 {
		t.Fatalf("sign with ssh-agent: exit %d: %s", code, stderr)
	}
	code, _, stderr = runCLI(t, "sign", dir, "--as", "heron", "--yes", "--accept-disagreement", "x")
	if code != 1 || !strings.Contains(stderr, "ssh-agent holds no key") {
		t.Errorf("heron has no key in the agent: exit %d: %s", code, stderr)
	}
	c, err := campaign.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range c.Signoffs() {
		if s.Party == "otter" && !s.Valid {
			t.Errorf("agent-made sign-off invalid: %v", s.Problems)
		}
	}
}

// TestBlindedReportsHoldNoTrueValue: before unblinding, no report file
// contains any true value of the sealed tables (as the reports would print
// it, to six significant digits).
func TestBlindedReportsHoldNoTrueValue(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "c")
	if err := demo.Build(dir, demo.Options{StopBefore: "unblind"}); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runCLI(t, "report", dir); code != 0 {
		t.Fatalf("report: %s", stderr)
	}
	ids, _, err := campaign.ReadIdentityFile(filepath.Join(dir, "keys", "custodian.key"))
	if err != nil {
		t.Fatal(err)
	}
	var truths []string
	sealed, _ := filepath.Glob(filepath.Join(dir, "sealed", "*", "*.age"))
	for _, p := range sealed {
		f, _ := os.Open(p)
		r, err := age.Decrypt(f, ids...)
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		buf.ReadFrom(r)
		f.Close()
		tb, err := table.ParseCSV(p, buf.Bytes(), table.CSVOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for j, col := range tb.Cols {
			if j != 0 {
				continue // the value column; errors may coincide with scaled ones
			}
			for _, v := range col {
				if s := strings.TrimSpace(table.Format(v)); len(s) >= 5 {
					truths = append(truths, s)
				}
			}
		}
	}
	if len(truths) < 20 {
		t.Fatalf("only %d true values found", len(truths))
	}
	reports, _ := filepath.Glob(filepath.Join(dir, "reports", "*"))
	if len(reports) < 5 {
		t.Fatalf("only %d reports", len(reports))
	}
	tags := regexp.MustCompile(`<[^>]*>`)
	for _, p := range reports {
		data, _ := os.ReadFile(p)
		if strings.HasSuffix(p, ".html") {
			// figure coordinates live inside tags; check the visible text
			data = tags.ReplaceAll(data, []byte(" "))
		}
		for _, v := range truths {
			// a whole number, not a digit run inside a longer one
			re := regexp.MustCompile(`(^|[^0-9.])` + regexp.QuoteMeta(v) + `($|[^0-9])`)
			if re.Match(data) {
				t.Errorf("%s contains the true value %s", filepath.Base(p), v)
			}
		}
	}
}

// TestFlagTypo: a mistyped flag is one error line that names it as typed
// and suggests the flag meant, not the whole help, and nothing on stdout.
func TestFlagTypo(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"compare", "a.csv", "b.csv", "--vaule", "rate"}, "tandem: error: unknown flag --vaule (did you mean --value?)\n"},
		{[]string{"compare", "--corelation", "0.5", "a.csv", "b.csv"}, "tandem: error: unknown flag --corelation (did you mean --correlation?)\n"},
		{[]string{"report", "--form", "json", "d"}, "tandem: error: unknown flag --form (did you mean --format?)\n"},
		{[]string{"sign", "d", "--zzz"}, "tandem: error: unknown flag --zzz\n"},
		{[]string{"compare", "--max-pull", "x", "a", "b"}, "tandem: error: --max-pull: invalid value \"x\": parse error\n"},
		{[]string{"compare", "a", "b", "--format"}, "tandem: error: --format needs a value\n"},
		{[]string{"sign", "d", "--yes=maybe"}, "tandem: error: --yes: invalid boolean value \"maybe\" (it takes no value, or --yes=true|false)\n"},
	} {
		code, stdout, stderr := runCLI(t, c.args...)
		if code != 2 || stdout != "" || stderr != c.want {
			t.Errorf("tandem %s: exit %d, stdout %q, stderr %q; want exit 2 and %q", strings.Join(c.args, " "), code, stdout, stderr, c.want)
		}
	}
}

// TestHelpFlags: -h lists every flag as typed, with two dashes for long
// names, and each short/long pair once on one line.
func TestHelpFlags(t *testing.T) {
	for _, cmd := range []string{"compare", "sync", "init", "seal", "blind", "status", "sign", "unblind", "verify", "report", "demo"} {
		code, stdout, stderr := runCLI(t, cmd, "-h")
		if code != 0 || stdout != "" {
			t.Errorf("%s -h: exit %d, stdout %q", cmd, code, stdout)
		}
		if !strings.HasPrefix(stderr, "Usage:") {
			t.Errorf("%s -h does not start with its usage:\n%s", cmd, stderr)
		}
		_, flags, ok := strings.Cut(stderr, "\nFlags:\n")
		if !ok {
			continue // a command without flags
		}
		seen := map[string]bool{}
		for _, line := range strings.Split(flags, "\n") {
			if !strings.HasPrefix(line, "  -") {
				continue
			}
			for _, f := range regexp.MustCompile(`(^|, )(-+)([a-z][a-z-]*)`).FindAllStringSubmatch(strings.TrimSpace(line), -1) {
				if (len(f[3]) == 1) != (f[2] == "-") {
					t.Errorf("%s -h: flag written as %s%s", cmd, f[2], f[3])
				}
				if seen[f[3]] {
					t.Errorf("%s -h: %s listed twice", cmd, f[3])
				}
				seen[f[3]] = true
			}
		}
		if len(seen) == 0 {
			t.Errorf("%s -h has a flag section without flags", cmd)
		}
	}
	_, _, stderr := runCLI(t, "compare", "-h")
	if !strings.Contains(stderr, "\n  -o, --output FILE\n") || !strings.Contains(stderr, "\n  --value COLUMN\n") {
		t.Errorf("compare -h does not pair -o with --output or lacks --value:\n%s", stderr)
	}
	_, _, stderr = runCLI(t, "sign", "-h")
	if !strings.Contains(stderr, "\n  -y, --yes\n") {
		t.Errorf("sign -h does not pair -y with --yes:\n%s", stderr)
	}
}

func TestVersion(t *testing.T) {
	code, stdout, _ := runCLI(t, "--version")
	if code != 0 || !strings.HasPrefix(stdout, "tandem ") || !strings.Contains(stdout, "(go1.") {
		t.Errorf("--version: exit %d, %q", code, stdout)
	}
	old := Version
	Version = "v1.2.3"
	defer func() { Version = old }()
	if v := version(); !strings.HasPrefix(v, "tandem v1.2.3") {
		t.Errorf("link-time version not shown: %q", v)
	}
}

func TestMessageHelpers(t *testing.T) {
	for path, want := range map[string]string{
		"out.json": "json", "r.md": "markdown", "page.HTML": "html", "ci.junit.xml": "junit", "r.xml": "junit",
		"r.txt": "text", "x.csv": "", "noext": "",
	} {
		got, ok := formatFromPath(path)
		if got != want || ok != (want != "") {
			t.Errorf("formatFromPath(%q) = %q, %v; want %q", path, got, ok, want)
		}
	}
	if got := argCount(1) + "; " + argCount(3); got != "1 argument; 3 arguments" {
		t.Errorf("argCount: %q", got)
	}
	if got := nameList([]string{"kestrel", "marmot"}); got != "kestrel, marmot" {
		t.Errorf("nameList: %q", got)
	}
	for _, c := range []struct {
		a, b string
		d    int
	}{{"vaule", "value", 1}, {"kitten", "sitting", 3}, {"", "abc", 3}, {"ca", "abc", 3}, {"same", "same", 0}} {
		// kitten/sitting = 3 is the textbook Levenshtein example; "ca"/"abc"
		// is 3 under optimal string alignment (2 under unrestricted
		// Damerau–Levenshtein), the known difference between the two.
		if got := editDistance(c.a, c.b); got != c.d {
			t.Errorf("editDistance(%q, %q) = %d, want %d", c.a, c.b, got, c.d)
		}
	}
}
