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
	add := exec.Command("ssh-add", filepath.Join(demo.KeysDir(dir), "otter"))
	add.Env = append(os.Environ(), "SSH_AUTH_SOCK="+sock)
	if out, err := add.CombinedOutput(); err != nil {
		t.Fatalf("ssh-add: %v\n%s", err, out)
	}
	t.Setenv("SSH_AUTH_SOCK", sock)
	code, _, stderr := runCLI(t, "sign", dir, "--as", "otter", "--yes", "--accept-disagreement", "zenith=the tilt is understood")
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
	ids, _, err := campaign.ReadIdentityFile(filepath.Join(demo.KeysDir(dir), demo.CustodianIdentity))
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
	// Reports print blinded numbers to a few significant digits, so a
	// blinded value can coincide with a true one by chance (the per-bin
	// maps scatter values over the same decades); a leak shows as most of
	// the true values, so at most a tenth may appear in any report.
	for _, p := range reports {
		data, _ := os.ReadFile(p)
		if strings.HasSuffix(p, ".html") {
			// figure coordinates live inside tags; check the visible text
			data = tags.ReplaceAll(data, []byte(" "))
		}
		var found []string
		for _, v := range truths {
			// a whole number, not a digit run inside a longer one
			re := regexp.MustCompile(`(^|[^0-9.])` + regexp.QuoteMeta(v) + `($|[^0-9])`)
			if re.Match(data) {
				found = append(found, v)
			}
		}
		if len(found) > len(truths)/10 {
			t.Errorf("%s contains %d of %d true values: %v", filepath.Base(p), len(found), len(truths), found)
		}
	}
}
