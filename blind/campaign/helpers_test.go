package campaign_test

import (
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"

	"tandem/blind/campaign"
	"tandem/blind/demo"
)

// needTool skips when an outside tool is missing, unless CI demands it
// (TANDEM_REQUIRE_TOOLS=1, set by .ci/run).
func needTool(t *testing.T, name string) string {
	t.Helper()
	p, err := exec.LookPath(name)
	if err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatalf("%s is required in CI but not installed", name)
		}
		t.Skipf("skipping: %s is not installed (apt-get install %s)", name, name)
	}
	return p
}

// buildDemo makes a demo campaign stopped before step (or complete).
func buildDemo(t testing.TB, stop string) string {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "c")
	if err := demo.Build(dir, demo.Options{StopBefore: stop}); err != nil {
		t.Fatal(err)
	}
	return dir
}

func open(t testing.TB, dir string) *campaign.Campaign {
	t.Helper()
	c, err := campaign.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func signer(t testing.TB, dir, name string) ssh.Signer {
	t.Helper()
	s, err := campaign.ReadSigner(demo.KeyFile(dir, name))
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func identity(t testing.TB, dir string) []age.Identity {
	t.Helper()
	id, _, err := campaign.ReadIdentityFile(demo.IdentityFile(dir))
	if err != nil {
		t.Fatal(err)
	}
	return id
}

func unblind(t *testing.T, dir string) error {
	t.Helper()
	c, err := campaign.Open(dir)
	if err != nil {
		return err // damaged or forked logs are refused at open
	}
	_, err = c.Unblind(identity(t, dir), signer(t, dir, "custodian"))
	return err
}

func blindStep(t testing.TB, dir string) *campaign.BlindResult {
	t.Helper()
	res, err := open(t, dir).Blind(identity(t, dir), signer(t, dir, "custodian"))
	if err != nil {
		t.Fatal(err)
	}
	return res
}

func problems(err error) string {
	var re *campaign.RefusedError
	if errors.As(err, &re) {
		var s []string
		for _, p := range re.Problems {
			s = append(s, p.String())
		}
		return strings.Join(s, "\n")
	}
	if err == nil {
		return ""
	}
	return err.Error()
}

func reportText(r *campaign.Report) string {
	var s []string
	for _, p := range r.Problems {
		s = append(s, p.String())
	}
	return strings.Join(s, "\n")
}

func sign(t *testing.T, dir, party, reason string) error {
	t.Helper()
	c := open(t, dir)
	st, _, err := c.Draft(party, reason)
	if err != nil {
		return err
	}
	_, err = c.Sign(st, signer(t, dir, party))
	return err
}

func nowForTest() time.Time { return time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC) }

func buildDemoErr(dir string) error { return demo.Build(dir, demo.Options{}) }
