package campaign_test

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/crypto/ssh"

	"tandem/blind/campaign"
	"tandem/blind/demo"
	"tandem/compare/table"
)

// TestMain lets the crash test re-run this binary as a child that is
// killed (SIGKILL on Unix) at a chosen point of a step.
func TestMain(m *testing.M) {
	if point := os.Getenv("TANDEM_CRASH_AT"); point != "" {
		os.Exit(crashChild(point, os.Getenv("TANDEM_CRASH_DIR")))
	}
	os.Exit(m.Run())
}

func rateTable() *table.Table {
	tb, _ := table.ParseCSV("rate.csv", []byte("lo,hi,rate,stat,syst\n1,2,2400,49,9.6\n2,3,2410,49,9.6\n3,4,2390,49,9.6\n4,5,2405,49,9.6\n5,6,2398,49,9.6\n6,7,2402,49,9.6\n7,8,2396,49,9.6\n8,9,2401,49,9.6\n9,10,2399,49,9.6\n10,11,2403,49,9.6\n11,12,2397,49,9.6\n12,13,2400,49,9.6\n"), table.CSVOptions{})
	return tb
}

// runStep runs the step a crash point belongs to, with the demo's keys.
func runStep(dir, point string) error {
	c, err := campaign.Open(dir)
	if err != nil {
		return err
	}
	key := func(name string) ssh.Signer {
		s, err := campaign.ReadSigner(demo.KeyFile(dir, name))
		if err != nil {
			panic(err)
		}
		return s
	}
	ids, _, err := campaign.ReadIdentityFile(demo.IdentityFile(dir))
	if err != nil {
		return err
	}
	switch point {
	case "seal":
		_, err = c.Seal("heron", "muon_rate", rateTable(), key("heron"), "crash test")
	case "blind":
		_, err = c.Blind(ids, key("custodian"))
	case "sign":
		st, _, derr := c.Draft("heron", "zenith=a crash test of the sign step")
		if derr != nil {
			return derr
		}
		_, err = c.Sign(st, key("heron"))
	case "unblind-files", "unblind-entry":
		_, err = c.Unblind(ids, key("custodian"))
	}
	return err
}

// crashChild runs the step and is killed at the point; exit 4 means the
// point was never reached.
func crashChild(point, dir string) int {
	campaign.SetCrashHook(func(p string) {
		if p == point {
			self, _ := os.FindProcess(os.Getpid())
			self.Kill()
			select {}
		}
	})
	if err := runStep(dir, point); err != nil {
		os.Stderr.WriteString(err.Error() + "\n")
		return 3
	}
	return 4
}

// TestCrashMidStep kills a child process at the points where a step has
// written its files but not its ledger entry (and, for unblind, after the
// entry but before the reports). Each time verify still holds (the files
// left are recognised, not taken for tampering), status explains them,
// and the next run of the step removes or finishes them.
func TestCrashMidStep(t *testing.T) {
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct{ point, stage string }{
		{"seal", "unblind"}, {"blind", "unblind"}, {"sign", "unblind"},
		{"unblind-files", "unblind"}, {"unblind-entry", "unblind"},
	} {
		t.Run(tc.point, func(t *testing.T) {
			dir := buildDemo(t, tc.stage)
			if tc.point == "blind" {
				if err := runStep(dir, "seal"); err != nil {
					t.Fatal(err)
				}
			}
			before := len(open(t, dir).Ledger)
			cmd := exec.Command(exe, "-test.run", "^$")
			cmd.Env = append(os.Environ(), "TANDEM_CRASH_AT="+tc.point, "TANDEM_CRASH_DIR="+dir)
			out, err := cmd.CombinedOutput()
			if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() == 3 || ee.ExitCode() == 4 || ee.ExitCode() == 5 {
				t.Fatalf("child was not killed at %s: %v\n%s", tc.point, err, out)
			}
			c := open(t, dir)
			committed := len(c.Ledger) - before
			want := 0
			if tc.point == "unblind-entry" {
				want = 1
			}
			if committed != want {
				t.Fatalf("%d entries committed by the killed step, want %d", committed, want)
			}
			r := campaign.Verify(dir)
			switch tc.point {
			case "sign", "unblind-files":
				// a statement, an unblinded table or key.revealed without
				// its entry is a problem (it could be a cut-off entry's),
				// explained as possibly left by an interrupted step
				for _, p := range r.Problems {
					if p.Kind != campaign.ProblemUncovered || !strings.Contains(p.Message, "interrupted") {
						t.Errorf("verify after a crash at %s: %s", tc.point, p)
					}
				}
				if r.OK() {
					t.Errorf("verify after a crash at %s: no problem for the files without an entry", tc.point)
				}
				r.Notes = append(r.Notes, reportText(r))
			default:
				if !r.OK() {
					t.Fatalf("verify after a crash at %s: %s", tc.point, reportText(r))
				}
			}
			st, err := c.Status()
			if err != nil {
				t.Fatal(err)
			}
			explained := strings.Join(append(st.Notes, r.Notes...), "\n")
			if !strings.Contains(explained, "interrupted") {
				t.Errorf("nothing explains the interrupted %s: %s", tc.point, explained)
			}
			// the next run of the step recovers
			if err := runStep(dir, tc.point); err != nil {
				t.Fatalf("rerun after the crash: %s", problems(err))
			}
			r = campaign.Verify(dir)
			if !r.OK() {
				t.Fatalf("verify after the rerun: %s", reportText(r))
			}
			if strings.Contains(strings.Join(r.Notes, "\n"), "interrupted") {
				t.Errorf("files of the interrupted step remain: %v", r.Notes)
			}
			if strings.HasPrefix(tc.point, "unblind") {
				if _, err := os.Stat(filepath.Join(dir, "reports", "final.html")); err != nil {
					t.Errorf("final reports missing after the rerun: %v", err)
				}
			}
		})
	}
}
