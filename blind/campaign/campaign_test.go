package campaign_test

import (
	"bytes"
	"errors"
	"golang.org/x/crypto/ssh"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"tandem/blind"
	"tandem/blind/audit"
	"tandem/blind/campaign"
	"tandem/blind/demo"
	"tandem/blind/internal/format"
	"tandem/blind/internal/sshsig"
	"tandem/blind/protocol"
	"tandem/compare/table"
)

func TestDemoVerifies(t *testing.T) {
	dir := buildDemo(t, "")
	if r := campaign.Verify(dir); !r.OK() {
		t.Fatalf("verify: %s", reportText(r))
	}
	c := open(t, dir)
	cmp, err := c.Compare()
	if err != nil {
		t.Fatal(err)
	}
	truth, err := c.CompareUnblinded()
	if err != nil {
		t.Fatal(err)
	}
	// Pulls, χ² and p-values are the same on blinded and true tables: the
	// per-bin factors and offsets cancel in d_i/σ_d,i. Offsets as wide as
	// the values cost digits in d'_i = v'_a − v'_b (the demo's energy
	// spectrum shifts values of ~40 by up to 4e5, about 4 digits, and a
	// p-value can amplify the pulls' rounding further: one drawn key gave
	// 3.5e-10 relative on a KS p-value), so the check holds to 1e-8
	// relative rather than to the last bits.
	for i := range cmp.Summary.Entries {
		b, u := cmp.Summary.Entries[i], truth.Entries[i]
		for _, k := range [][2]float64{{b.Chi2, u.Chi2}, {b.PValue, u.PValue}, {b.KSP, u.KSP}, {b.RunsP, u.RunsP}, {b.MaxPullP, u.MaxPullP}} {
			if math.Abs(k[0]-k[1]) > 1e-8*math.Max(math.Abs(k[1]), 1e-300) {
				t.Errorf("%s: blinded %v vs true %v", b.Observable, k[0], k[1])
			}
		}
		for j := range b.Pulls {
			if math.Abs(b.Pulls[j]-u.Pulls[j]) > 1e-8*math.Max(1, math.Abs(u.Pulls[j])) {
				t.Errorf("%s bin %d: pull %v vs %v", b.Observable, j, b.Pulls[j], u.Pulls[j])
			}
		}
		if slices.Equal(b.A, u.A) {
			t.Errorf("%s: blinded values equal the true values", b.Observable)
		}
	}
}

// TestAgeToolOpensSealedFile: Debian's age opens a sealed table with the
// custodian identity, and the plaintext is the documented text header plus
// CSV.
func TestAgeToolOpensSealedFile(t *testing.T) {
	agePath := needTool(t, "age")
	dir := buildDemo(t, "blind")
	out, err := exec.Command(agePath, "--decrypt", "-i", demo.IdentityFile(dir),
		one(t, dir, "sealed/heron/muon_rate.v1-*.age")).Output()
	if err != nil {
		t.Fatalf("age --decrypt: %v", err)
	}
	if !strings.HasPrefix(string(out), "# tandem/v2 sealed table\n# campaign: kettlewell-muon-2026\n# team: heron\n# observable: muon_rate\n# version: 1\n# nonce: ") ||
		!strings.Contains(string(out), "\nlo,hi,rate,stat,syst\n") {
		t.Errorf("unexpected plaintext:\n%s", out)
	}
	if _, err := table.ParseCSV("age-out", out, table.CSVOptions{}); err != nil {
		t.Errorf("plaintext is not a readable CSV: %v", err)
	}
}

// TestSSHKeygenInterop: OpenSSH's ssh-keygen -Y verify accepts tandem's
// sign-offs and every ledger entry's signature, and tandem accepts a
// sign-off signed by ssh-keygen -Y sign.
func TestSSHKeygenInterop(t *testing.T) {
	kg := needTool(t, "ssh-keygen")
	dir := buildDemo(t, "unblind")
	allowed := filepath.Join(t.TempDir(), "allowed_signers")
	var lines []string
	for _, p := range []string{"heron", "otter", "ibis", "custodian"} {
		pub, _ := os.ReadFile(demo.KeyFile(dir, p) + ".pub")
		lines = append(lines, p+" "+strings.TrimSpace(string(pub)))
	}
	os.WriteFile(allowed, []byte(strings.Join(lines, "\n")+"\n"), 0o644)
	verify := func(ns, id, sig string, msg []byte) error {
		cmd := exec.Command(kg, "-Y", "verify", "-n", ns, "-f", allowed, "-I", id, "-s", sig)
		cmd.Stdin = bytes.NewReader(msg)
		if out, err := cmd.CombinedOutput(); err != nil {
			return errors.New(string(out))
		}
		return nil
	}
	stmt := one(t, dir, "signoffs/heron.1-*.statement")
	body, _ := os.ReadFile(stmt)
	if err := verify(campaign.SignoffNamespace, "heron", stmt+".sig", body); err != nil {
		t.Fatalf("ssh-keygen -Y verify rejected tandem's sign-off: %v", err)
	}
	// Every ledger entry: the signed bytes are the line without "sig".
	c := open(t, dir)
	for _, e := range c.Ledger {
		sig := filepath.Join(t.TempDir(), "entry.sig")
		os.WriteFile(sig, sshsig.Armor(e.Sig), 0o644)
		if err := verify(format.LedgerNamespace, e.Actor, sig, e.SignedBytes()); err != nil {
			t.Errorf("ssh-keygen rejected ledger entry %d (%s by %s): %v", e.Seq, e.Step, e.Actor, err)
		}
		if err := verify(format.LedgerNamespace, e.Actor, sig, append(e.SignedBytes(), ' ')); err == nil {
			t.Errorf("ssh-keygen accepted a changed entry %d", e.Seq)
		}
	}
	// Now replace otter's signature with one made by ssh-keygen.
	otterStmt := one(t, dir, "signoffs/otter.1-*.statement")
	ours, _ := os.ReadFile(otterStmt + ".sig")
	os.Remove(otterStmt + ".sig")
	key := demo.KeyFile(dir, "otter")
	os.Chmod(key, 0o600)
	if out, err := exec.Command(kg, "-Y", "sign", "-n", campaign.SignoffNamespace, "-f", key, otterStmt).CombinedOutput(); err != nil {
		t.Fatalf("ssh-keygen -Y sign: %v\n%s", err, out)
	}
	// Ed25519 signatures are deterministic, so ssh-keygen's SSHSIG file is
	// byte for byte the one tandem wrote, and the campaign still verifies.
	theirs, _ := os.ReadFile(otterStmt + ".sig")
	if !bytes.Equal(ours, theirs) {
		t.Errorf("ssh-keygen's signature differs from tandem's:\n%s\n%s", theirs, ours)
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify: %s", reportText(r))
	}
}

// TestUnblindRefusals: each missing party, a foreign key, a replayed or
// stale statement and a corrupted signature make unblind refuse, name the
// problem and write no unblinded/ folder.
func TestUnblindRefusals(t *testing.T) {
	cases := []struct {
		name  string
		spoil func(t *testing.T, dir string)
		want  string
	}{
		{"missing heron", func(t *testing.T, dir string) { removeSignoffEntry(t, dir, "heron") }, "missing sign-off: heron"},
		{"missing ibis", func(t *testing.T, dir string) { removeSignoffEntry(t, dir, "ibis") }, "missing sign-off: ibis"},
		{"corrupted signature", func(t *testing.T, dir string) {
			p := one(t, dir, "signoffs/ibis.1-*.statement.sig")
			b, _ := os.ReadFile(p)
			b[len(b)/2] ^= 1
			os.WriteFile(p, b, 0o644)
		}, "ibis.1-"},
		{"foreign key", func(t *testing.T, dir string) {
			// otter's statement signed with heron's key
			p := one(t, dir, "signoffs/otter.1-*.statement")
			body, _ := os.ReadFile(p)
			sig, _ := sshsig.Sign(signer(t, dir, "heron"), campaign.SignoffNamespace, body)
			os.WriteFile(p+".sig", sig, 0o644)
		}, "not by the expected key"},
		{"stale after re-seal", func(t *testing.T, dir string) {
			c := open(t, dir)
			tb := demoTable(t, dir, "heron", "muon_rate")
			if _, err := c.Seal("heron", "muon_rate", tb, signer(t, dir, "heron"), "recalibrated"); err != nil {
				t.Fatal(err)
			}
		}, "stale"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			dir := buildDemo(t, "unblind")
			tc.spoil(t, dir)
			err := unblind(t, dir)
			if err == nil || !errors.Is(err, campaign.ErrRefused) || !strings.Contains(problems(err), tc.want) {
				t.Errorf("got %v (%s), want refusal naming %q", err, problems(err), tc.want)
			}
			if _, err := os.Stat(filepath.Join(dir, "unblinded")); !os.IsNotExist(err) {
				t.Errorf("unblinded/ exists after a refusal")
			}
			if _, err := os.Stat(filepath.Join(dir, campaign.RevealedFile)); !os.IsNotExist(err) {
				t.Errorf("key revealed after a refusal")
			}
		})
	}
}

// demoTable is a true table of the demo, read back from its sealed copy.
func demoTable(t *testing.T, dir, team, obs string) *table.Table {
	t.Helper()
	out, err := exec.Command("age", "--decrypt", "-i", demo.IdentityFile(dir),
		one(t, dir, "sealed/"+team+"/"+obs+".v1-*.age")).Output()
	if err != nil {
		// without the age tool: a table of the right shape
		tb, _ := table.ParseCSV("x.csv", []byte("lo,hi,rate,stat,syst\n1,2,2400,49,9.6\n"), table.CSVOptions{})
		return tb
	}
	tb, err := table.ParseCSV("sealed.csv", out, table.CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return tb
}

// removeSignoffEntry rewrites the ledger without a party's sign-off, as if
// it had never signed (re-signing the chain is not possible, so this
// truncates the ledger before the first sign entry and re-signs the
// others with the demo's keys).
func removeSignoffEntry(t *testing.T, dir, party string) {
	t.Helper()
	c := open(t, dir)
	var keep []format.Entry
	for _, e := range c.Ledger {
		if e.Step == "sign" && e.Actor == party {
			for f := range e.Files {
				os.Remove(filepath.Join(dir, filepath.FromSlash(f)))
			}
			continue
		}
		keep = append(keep, e)
	}
	rewriteLedger(t, dir, keep)
}

// rewriteLedger writes entries as fresh logs, each entry following those
// before it and signed by its actor's demo key (or by the key named in
// keyOf, by index from 1).
func rewriteLedger(t *testing.T, dir string, entries []format.Entry, keyOf ...map[int]string) {
	t.Helper()
	err := campaign.RewriteLogs(dir, entries, func(i int, e *format.Entry) ssh.Signer {
		who := e.Actor
		if len(keyOf) > 0 && keyOf[0][i+1] != "" {
			who = keyOf[0][i+1]
		}
		return signer(t, dir, who)
	})
	if err != nil {
		t.Fatal(err)
	}
}

// one is the one file of the campaign matching a glob pattern.
func one(t testing.TB, dir, pattern string) string {
	t.Helper()
	m, _ := filepath.Glob(filepath.Join(dir, filepath.FromSlash(pattern)))
	if len(m) != 1 {
		t.Fatalf("%s matches %d files in %s", pattern, len(m), dir)
	}
	return m[0]
}

// TestForgedEntries: entries made in another party's name, by an unknown
// party, a second init and entries out of order are refused by verify and
// unblind even when the chain is recomputed.
func TestForgedEntries(t *testing.T) {
	cases := []struct {
		name string
		edit func(t *testing.T, dir string, es []format.Entry) ([]format.Entry, map[int]string)
		want string
	}{
		{"seal signed by another team", func(t *testing.T, dir string, es []format.Entry) ([]format.Entry, map[int]string) {
			for i, e := range es {
				if e.Step == "seal" && e.Actor == "otter" {
					return es, map[int]string{i + 1: "heron"}
				}
			}
			return es, nil
		}, "not by the expected key"},
		{"seal in another team's name", func(t *testing.T, dir string, es []format.Entry) ([]format.Entry, map[int]string) {
			for i, e := range es {
				if e.Step == "seal" && e.Actor == "otter" {
					es[i].Actor = "heron"
					break
				}
			}
			return es, nil
		}, "made by heron, not by the team"},
		{"unknown party", func(t *testing.T, dir string, es []format.Entry) ([]format.Entry, map[int]string) {
			e := es[len(es)-1]
			e.Actor = "mallory"
			e.Data = map[string]string{"party": "mallory", "verdict": "pass"}
			e.Files = nil
			return append(es, e), map[int]string{len(es) + 1: "heron"}
		}, `"mallory" is not a party`},
		{"second init", func(t *testing.T, dir string, es []format.Entry) ([]format.Entry, map[int]string) {
			return append(es, es[0]), nil
		}, "a second init entry"},
		{"out of order", func(t *testing.T, dir string, es []format.Entry) ([]format.Entry, map[int]string) {
			// move the first open entry before otter's seals
			var open, firstOtter int
			for i, e := range es {
				if e.Step == "open" && open == 0 {
					open = i
				}
				if e.Step == "seal" && e.Actor == "otter" && firstOtter == 0 {
					firstOtter = i
				}
			}
			o := es[open]
			es = append(es[:open], es[open+1:]...)
			es = slices.Insert(es, firstOtter, o)
			return es, nil
		}, "not the latest seal it follows"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			dir := buildDemo(t, "unblind")
			c := open(t, dir)
			es, keys := tc.edit(t, dir, slices.Clone(c.Ledger))
			if keys != nil {
				rewriteLedger(t, dir, es, keys)
			} else {
				rewriteLedger(t, dir, es)
			}
			r := campaign.Verify(dir)
			if r.OK() || !strings.Contains(reportText(r), tc.want) {
				t.Errorf("verify: %s; want a problem naming %q", reportText(r), tc.want)
			}
			err := unblind(t, dir)
			if err == nil {
				t.Fatalf("unblind accepted a forged ledger")
			}
			if _, err := os.Stat(filepath.Join(dir, campaign.RevealedFile)); !os.IsNotExist(err) {
				t.Errorf("key revealed after a refusal")
			}
		})
	}
}

// TestSealNeedsTeamKey: a table sealed under another team's name without
// that team's key is refused and leaves nothing behind.
func TestSealNeedsTeamKey(t *testing.T) {
	dir := buildDemo(t, "seal")
	tb, _ := table.ParseCSV("x.csv", []byte("lo,hi,rate,stat,syst\n1,2,2400,49,9.6\n"), table.CSVOptions{})
	_, err := open(t, dir).Seal("otter", "muon_rate", tb, signer(t, dir, "heron"), "")
	if !errors.Is(err, campaign.ErrRefused) || !strings.Contains(err.Error(), "not the one the protocol gives otter") {
		t.Errorf("got %v", err)
	}
	if c := open(t, dir); len(c.Ledger) != 1 {
		t.Errorf("ledger grew to %d entries", len(c.Ledger))
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify after a refused seal: %s", reportText(r))
	}
}

// TestNoPeeking: before every team has sealed an observable, its tables
// are published only in team maps, nothing can be compared, and the
// common-map files do not exist; once all have sealed, blind opens it.
func TestNoPeeking(t *testing.T) {
	dir := buildDemo(t, "blind") // heron sealed and blinded (team map), otter sealed
	// Undo otter's seals to look at the state before otter sealed.
	c := open(t, dir)
	var keep []format.Entry
	for _, e := range c.Ledger {
		if e.Step == "seal" && e.Actor == "otter" {
			os.Remove(filepath.Join(dir, filepath.FromSlash(slices.Collect(mapKeys(e.Files))[0])))
			continue
		}
		keep = append(keep, e)
	}
	rewriteLedger(t, dir, keep)
	c = open(t, dir)
	cmp, err := c.Compare()
	if err != nil {
		t.Fatal(err)
	}
	if cmp.Verdict != campaign.Incomplete || len(cmp.Summary.Entries) != 0 || len(cmp.Incomplete) != 3 {
		t.Fatalf("comparison before otter sealed: %v, %d entries", cmp.Verdict, len(cmp.Summary.Entries))
	}
	if !strings.Contains(cmp.Incomplete[0].Reason, "not sealed yet by otter") {
		t.Errorf("reason %q", cmp.Incomplete[0].Reason)
	}
	own := one(t, dir, "blinded/heron/muon_rate.v1-*.own.csv")
	if _, err := os.Stat(own); err != nil {
		t.Fatalf("heron's own-map table: %v", err)
	}
	if m, _ := filepath.Glob(filepath.Join(dir, "blinded", "*", "*.v1-????????????.csv")); len(m) != 0 {
		t.Fatalf("common-map tables exist before every team sealed: %v", m)
	}
	if _, _, err := c.Draft("heron", ""); !errors.Is(err, campaign.ErrRefused) || !strings.Contains(problems(err), "incomplete") {
		t.Errorf("sign before every team sealed: %v", err)
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Fatalf("verify: %s", reportText(r))
	}
	// otter seals; blind opens every observable in the common map, and the
	// common map differs from heron's own map.
	for _, o := range []string{"muon_rate", "zenith", "energy_spectrum"} {
		tb := demoTable(t, buildDemoOnce(t), "otter", o)
		if _, err := open(t, dir).Seal("otter", o, tb, signer(t, dir, "otter"), ""); err != nil {
			t.Fatal(err)
		}
	}
	res := blindStep(t, dir)
	if len(res.Opened) != 3 || len(res.Files) != 6 {
		t.Fatalf("blind opened %v, wrote %v", res.Opened, res.Files)
	}
	ownData, _ := os.ReadFile(own)
	common, _ := os.ReadFile(one(t, dir, "blinded/heron/muon_rate.v1-????????????.csv"))
	ob, _ := table.ParseCSV("own", ownData, table.CSVOptions{})
	cb, _ := table.ParseCSV("common", common, table.CSVOptions{})
	if slices.Equal(ob.Column("rate"), cb.Column("rate")) {
		t.Errorf("team map equals the common map")
	}
	c = open(t, dir)
	if cmp, _ := c.Compare(); cmp.Verdict == campaign.Incomplete {
		t.Errorf("still incomplete after opening: %v", cmp.Incomplete)
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Fatalf("verify: %s", reportText(r))
	}
}

var (
	demoOnce sync.Once
	demoDir  string
)

// buildDemoOnce is a complete demo shared by tests that only read it.
func buildDemoOnce(t *testing.T) string {
	demoOnce.Do(func() {
		d, err := os.MkdirTemp("", "tandem-demo-")
		if err != nil {
			t.Fatal(err)
		}
		demoDir = filepath.Join(d, "c")
		if err := buildDemoErr(demoDir); err != nil {
			t.Fatal(err)
		}
	})
	return demoDir
}

func mapKeys(m map[string]string) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

// TestProtocolLocked: an edit of campaign.toml after init is refused by
// every command, and an amendment is a signed step that makes sign-offs
// stale.
func TestProtocolLocked(t *testing.T) {
	dir := buildDemo(t, "unblind")
	p := filepath.Join(dir, campaign.ProtocolFile)
	good, _ := os.ReadFile(p)
	edited := strings.Replace(string(good), "shift = [-10000.0, 10000.0]", "shift = [-10000.0, 10000.0]\n  max_pull = 5.0", 1)
	os.WriteFile(p, []byte(edited), 0o644)
	if _, err := campaign.Open(dir); !errors.Is(err, campaign.ErrRefused) || !strings.Contains(err.Error(), "means something else than the one") {
		t.Errorf("open after an edit: %v", err)
	}
	if r := campaign.Verify(dir); r.OK() || !strings.Contains(reportText(r), "campaign.toml") {
		t.Errorf("verify after an edit: %s", reportText(r))
	}
	os.WriteFile(p, good, 0o644)
	c := open(t, dir)
	stale, err := c.Amend("ibis", []byte(edited), "the review board widened the pull limit", signer(t, dir, "ibis"))
	if err != nil {
		t.Fatal(err)
	}
	if len(stale) != 3 {
		t.Errorf("stale sign-offs %v, want all three", stale)
	}
	c = open(t, dir)
	for _, s := range c.Signoffs() {
		if !s.Stale {
			t.Errorf("%s's sign-off is not stale after the amendment", s.Party)
		}
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify after an amendment: %s", reportText(r))
	}
	if err := unblind(t, dir); err == nil || !strings.Contains(problems(err), "amended the protocol") {
		t.Errorf("unblind with stale sign-offs: %v", err)
	}
	// Parties and keys cannot be amended.
	worse := strings.Replace(edited, `name = "ibis"`, `name = "ibis2"`, 1)
	worse = strings.Replace(worse, `"ibis"]`, `"ibis2"]`, 1)
	if _, err := open(t, dir).Amend("ibis", []byte(worse), "rename", signer(t, dir, "ibis")); err == nil {
		t.Errorf("an amendment renamed a party")
	}
}

// TestRevisionRound: a re-seal after an opening needs a reason, names the
// stale sign-offs, starts a new round and shows in the notes and status.
func TestRevisionRound(t *testing.T) {
	dir := buildDemo(t, "unblind")
	tb := demoTable(t, dir, "otter", "zenith")
	c := open(t, dir)
	if _, err := c.Seal("otter", "zenith", tb, signer(t, dir, "otter"), ""); err == nil || !strings.Contains(err.Error(), "needs --reason") {
		t.Errorf("re-seal without a reason: %v", err)
	}
	for _, bad := range []string{"new \x1b[31msurvey", "new \u202esurvey"} {
		if _, err := open(t, dir).Seal("otter", "zenith", tb, signer(t, dir, "otter"), bad); err == nil || !strings.Contains(err.Error(), "--reason") {
			t.Errorf("reason %q: %v", bad, err)
		}
	}
	if _, _, err := open(t, dir).Draft("heron", "zenith=the tilt \x07is understood"); err == nil || !strings.Contains(err.Error(), "control character") {
		t.Errorf("accept reason with a control character: %v", err)
	}
	res, err := open(t, dir).Seal("otter", "zenith", tb, signer(t, dir, "otter"), "new tower survey")
	if err != nil {
		t.Fatal(err)
	}
	if !res.Revision || res.Seal.Version != 2 || strings.Join(res.Stale, ",") != "heron,ibis,otter" {
		t.Errorf("revision %v version %d stale %v", res.Revision, res.Seal.Version, res.Stale)
	}
	st, err := open(t, dir).Status()
	if err != nil {
		t.Fatal(err)
	}
	var next []string
	for _, a := range st.Next {
		next = append(next, a.String())
	}
	if all := strings.Join(next, "\n"); !strings.Contains(all, "heron: sign again") || !strings.Contains(all, "stale after otter re-sealed zenith (v2") {
		t.Errorf("next actions %q", next)
	}
	if !strings.Contains(strings.Join(next, "\n"), "custodian: blind") {
		t.Errorf("next actions lack the blind step: %q", next)
	}
	blindStep(t, dir)
	c = open(t, dir)
	if n := c.State().Observables["zenith"].Round(); n != 2 {
		t.Errorf("round %d, want 2", n)
	}
	notes := strings.Join(c.Notes(nil), "\n")
	if !strings.Contains(notes, "otter revised zenith after round 1 had opened") || !strings.Contains(notes, "new tower survey") {
		t.Errorf("notes lack the revision: %s", notes)
	}
	for _, p := range []string{"heron", "otter", "ibis"} {
		if err := sign(t, dir, p, "zenith=the tilt is understood"); err != nil {
			t.Fatal(err)
		}
	}
	if err := unblind(t, dir); err != nil {
		t.Fatalf("unblind after round 2: %s", problems(err))
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify: %s", reportText(r))
	}
}

// TestStatusStates: real states from init on, and actions as next steps.
func TestStatusStates(t *testing.T) {
	dir := buildDemo(t, "seal")
	st, err := open(t, dir).Status()
	if err != nil {
		t.Fatal(err)
	}
	if st.State != campaign.CampaignSealing || st.Observables[0].State != campaign.StateWaiting {
		t.Errorf("after init: %s / %s", st.State, st.Observables[0].State)
	}
	var next []string
	for _, a := range st.Next {
		next = append(next, a.String())
	}
	if !slices.Contains(next, "otter: seal energy_spectrum") || !slices.Contains(next, "heron: seal muon_rate") {
		t.Errorf("next %q", next)
	}
	dir = buildDemo(t, "unblind")
	st, _ = open(t, dir).Status()
	if st.State != campaign.CampaignReady {
		t.Errorf("before unblind: %s (%v)", st.State, st.Problems)
	}
}

// TestConcurrentSeals: seals from many goroutines (each with its own
// Campaign, as separate processes would) leave a valid chain.
func TestConcurrentSeals(t *testing.T) {
	dir := buildDemo(t, "seal")
	rng := rand.New(rand.NewPCG(5, 5))
	tables := map[string]*table.Table{}
	for _, o := range []string{"muon_rate", "zenith", "energy_spectrum"} {
		n := 4
		tb := &table.Table{LoName: "lo", HiName: "hi"}
		for i := 0; i < n; i++ {
			tb.Lo, tb.Hi = append(tb.Lo, float64(i)), append(tb.Hi, float64(i+1))
		}
		cols := []string{"rate", "stat", "syst"}
		switch o {
		case "zenith":
			cols = []string{"events", "stat", "syst"}
		case "energy_spectrum":
			cols = []string{"counts", "stat"}
		}
		for _, c := range cols {
			v := make([]float64, n)
			for i := range v {
				v[i] = 1 + rng.Float64()
			}
			tb.Names, tb.Cols = append(tb.Names, c), append(tb.Cols, v)
		}
		tables[o] = tb
	}
	signers := map[string]any{}
	for _, team := range []string{"heron", "otter"} {
		signers[team] = signer(t, dir, team)
	}
	var wg sync.WaitGroup
	errs := make(chan error, 24)
	for i := 0; i < 4; i++ {
		for _, team := range []string{"heron", "otter"} {
			for o, tb := range tables {
				wg.Add(1)
				go func() {
					defer wg.Done()
					c, err := campaign.Open(dir)
					if err != nil {
						errs <- err
						return
					}
					_, err = c.Seal(team, o, tb, signer(t, dir, team), "")
					errs <- err
				}()
			}
		}
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		if err != nil {
			t.Fatal(err)
		}
	}
	c := open(t, dir)
	if len(c.Ledger) != 1+24 {
		t.Errorf("ledger has %d entries, want 25", len(c.Ledger))
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify after concurrent seals: %s", reportText(r))
	}
	if st := c.State().Observables["zenith"].Latest["heron"]; st.Version != 4 {
		t.Errorf("version %d, want 4", st.Version)
	}
}

func TestProtocolRefusals(t *testing.T) {
	dir := buildDemo(t, "init")
	good, _ := os.ReadFile(filepath.Join(dir, campaign.ProtocolFile))
	cases := []struct {
		edit func(string) string
		want string
	}{
		{func(s string) string { return s + "\nsurprise = 1\n" }, `surprise"`},
		{func(s string) string { return strings.Replace(s, "scale = [0.1, 10.0]", "scale = [-0.5, 1.6]", 1) }, "must be positive"},
		{func(s string) string { return strings.Replace(s, "scale = [0.1, 10.0]", "scale = [1.0, 1.0]", 1) }, "too narrow"},
		{func(s string) string {
			return strings.Replace(s, "shift = [-10000.0, 10000.0]", "shift = [0.0, 0.0]", 1)
		}, "no width"},
		{func(s string) string { return strings.Replace(s, "  shift = [-10000.0, 10000.0]\n", "", 1) }, "shift must be a range"},
		{func(s string) string { return strings.Replace(s, "scale = [0.1, 10.0]", "scale = [1e-9, 2.0]", 1) }, "overflow or collapse"},
		{func(s string) string {
			return strings.Replace(s, `quorum = ["heron", "otter", "ibis"]`, "quorum = []", 1)
		}, "quorum is empty"},
		{func(s string) string { return strings.Replace(s, `name = "otter"`, `name = "heron"`, 1) }, `party "heron" is declared twice`},
		{func(s string) string { return strings.Replace(s, `format = "tandem/v2"`, `format = "tandem/v9"`, 1) }, "format must be"},
		{func(s string) string { return strings.Replace(s, `format = "tandem/v2"`, `format = "tandem/v1"`, 1) }, "a tandem/v1 protocol"},
		{func(s string) string {
			return strings.Replace(s, `title = "Monthly muon rate"`, "title = \"Monthly \u202emuon rate\"", 1)
		}, "bidirectional"},
	}
	for _, c := range cases {
		_, err := protocol.Parse("campaign.toml", []byte(c.edit(string(good))))
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "campaign.toml:") {
			t.Errorf("got %v, want %q with a line number", err, c.want)
		}
	}
}

func TestSealRefusesUndeclaredColumn(t *testing.T) {
	dir := buildDemo(t, "seal")
	tb, _ := table.ParseCSV("x.csv", []byte("lo,hi,rate,stat,syst,secret\n0,1,1,1,1,42\n"), table.CSVOptions{})
	_, err := open(t, dir).Seal("heron", "muon_rate", tb, signer(t, dir, "heron"), "")
	if err == nil || !strings.Contains(err.Error(), `column "secret" is not declared`) {
		t.Errorf("got %v", err)
	}
	if _, err := open(t, dir).Seal("ibis", "muon_rate", tb, signer(t, dir, "ibis"), ""); err == nil {
		t.Errorf("a reviewer sealed a table")
	}
}

func TestWrongIdentity(t *testing.T) {
	dir := buildDemo(t, "blind")
	other := filepath.Join(t.TempDir(), "other.key")
	if _, err := campaign.GenerateCustodian(other, nowForTest()); err != nil {
		t.Fatal(err)
	}
	id, _, _ := campaign.ReadIdentityFile(other)
	before, _ := filepath.Glob(filepath.Join(dir, "blinded", "*", "*"))
	_, err := open(t, dir).Blind(id, signer(t, dir, "custodian"))
	if !errors.Is(err, campaign.ErrRefused) || !strings.Contains(problems(err), "not the custodian's") {
		t.Errorf("got %v", err)
	}
	after, _ := filepath.Glob(filepath.Join(dir, "blinded", "*", "*"))
	if len(after) != len(before) {
		t.Errorf("blinded/ written with a wrong identity: %v", after)
	}
}

// countingTable is a 20-bin counting spectrum with √N errors, the case
// where blinded uncertainties give the map away.
func countingTable() *table.Table {
	t := &table.Table{Source: "counts.csv", LoName: "lo", HiName: "hi", Names: []string{"counts", "stat"}, Cols: make([][]float64, 2)}
	for i := 0; i < 20; i++ {
		n := math.Round(5e4 * math.Pow(float64(i+1), -1.5))
		t.Lo, t.Hi = append(t.Lo, float64(i)), append(t.Hi, float64(i+1))
		t.Cols[0] = append(t.Cols[0], n)
		t.Cols[1] = append(t.Cols[1], math.Sqrt(n))
	}
	return t
}

// TestBlindRefusesBrokenMap: with a narrow shift range on counting data,
// the blind step's own attacks recover the true counts and it refuses,
// naming the attack; a protocol that accepts the risk publishes, and the
// reports say so.
func TestBlindRefusesBrokenMap(t *testing.T) {
	for _, accept := range []bool{false, true} {
		dir := buildDemo(t, "init")
		p := filepath.Join(dir, campaign.ProtocolFile)
		proto, _ := os.ReadFile(p)
		narrow := "shift = [-1.0, 1.0]"
		if accept {
			narrow += "\n  accept_risk = \"a test of the refusal\""
		}
		os.WriteFile(p, []byte(strings.Replace(string(proto), "shift = [-400000.0, 400000.0]", narrow, 1)), 0o644)
		c, err := campaign.Init(dir, signer(t, dir, "custodian"))
		if err != nil {
			t.Fatal(err)
		}
		if _, err := c.Seal("heron", "energy_spectrum", countingTable(), signer(t, dir, "heron"), ""); err != nil {
			t.Fatal(err)
		}
		res, err := open(t, dir).Blind(identity(t, dir), signer(t, dir, "custodian"))
		if !accept {
			if !errors.Is(err, campaign.ErrRefused) || !strings.Contains(problems(err), "energy_spectrum/counts: the ") || !strings.Contains(problems(err), "attack recovers") {
				t.Fatalf("narrow shift: got %v (%s)", err, problems(err))
			}
			if m, _ := filepath.Glob(filepath.Join(dir, "blinded", "*", "*")); len(m) != 0 {
				t.Errorf("published after a refusal: %v", m)
			}
			continue
		}
		if err != nil || len(res.Risks) == 0 {
			t.Fatalf("accepted risk: %v, risks %v", err, res.Risks)
		}
		notes := strings.Join(open(t, dir).Notes(nil), "\n")
		if !strings.Contains(notes, "accepts the risk") || !strings.Contains(notes, "a test of the refusal") {
			t.Errorf("notes lack the accepted risk: %s", notes)
		}
	}
}

// TestTemplateDefaultsPassAudit: the template's default ranges (scale
// [0.5, 2], shift [-1000, 1000]) on counting data as large as the shift
// range, with √N errors, survive every attack of the battery for many
// keys.
func TestTemplateDefaultsPassAudit(t *testing.T) {
	text := protocol.Template("x", "", "")
	if !strings.Contains(text, "scale = [0.5, 2.0]") || !strings.Contains(text, "shift = [-1000.0, 1000.0]") {
		t.Fatal("template defaults changed; update this test")
	}
	spec := blind.MapSpec{Observable: "spectrum", Column: "rate", Scope: blind.CommonScope, Scale: blind.Range{Lo: 0.5, Hi: 2}, Shift: blind.Range{Lo: -1000, Hi: 1000}}
	var lo, hi, v, e []float64
	for i := 0; i < 30; i++ {
		n := math.Round(1000 * math.Exp(-float64(i)/15))
		lo, hi = append(lo, float64(i)), append(hi, float64(i+1))
		v, e = append(v, n), append(e, math.Sqrt(n))
	}
	for trial := 0; trial < 20; trial++ {
		k, _ := blind.GenerateKey()
		m := k.Map(spec, len(v))
		col := audit.Column{Observable: "spectrum", Column: "rate", Lo: lo, Hi: hi, True: v, Blinded: m.Values(v),
			BlindedErr: [][]float64{m.Errors(e)}, Scale: [2]float64{0.5, 2}, Shift: [2]float64{-1000, 1000}}
		for _, f := range audit.Run([]audit.Column{col}, audit.DefaultThreshold) {
			if f.Broken {
				t.Errorf("key %d: %s breaks the template defaults (precision %.3g)", trial, f.Attack, f.Precision)
			}
		}
	}
}

// TestDemoRangesPassAudit: the demo's declared ranges survive the attack
// battery on the demo's tables for many keys (the demo must never be
// refused by its own blind step).
func TestDemoRangesPassAudit(t *testing.T) {
	dir := buildDemoOnce(t)
	p := open(t, dir).Protocol
	broken := map[string]int{}
	worst, worstWhat := 1.0, ""
	const keys = 200
	rng := rand.New(rand.NewPCG(2026, 12)) // fixed keys: the test is reproducible
	for trial := 0; trial < keys; trial++ {
		kb := make([]byte, 32)
		for i := range kb {
			kb[i] = byte(rng.Uint32())
		}
		k, _ := blind.KeyFromBytes(kb)
		for _, o := range p.Observables {
			for _, team := range []string{"heron", "otter"} {
				tb := demo.ChainOutput(team, o.Name)
				col := o.Columns[0]
				if col.AcceptRisk != "" {
					continue // published anyway, with the reason shown
				}
				for _, scope := range []string{blind.CommonScope, blind.TeamScope(team)} {
					m := k.Map(col.MapSpec(o.Name, scope), tb.Len())
					ac := audit.Column{Observable: o.Name, Column: col.Name, Lo: tb.Lo, Hi: tb.Hi, True: tb.Column(col.Name),
						Blinded: m.Values(tb.Column(col.Name)), Scale: [2]float64{col.Scale[0], col.Scale[1]}, Shift: [2]float64{col.Shift[0], col.Shift[1]}}
					for _, e := range col.Errors {
						ac.BlindedErr = append(ac.BlindedErr, m.Errors(tb.Column(e)))
					}
					for _, f := range audit.Run([]audit.Column{ac}, audit.DefaultThreshold) {
						if f.Broken {
							broken[o.Name+" "+f.Attack]++
						}
						if f.Precision < worst {
							worst, worstWhat = f.Precision, o.Name+" "+f.Attack+" "+f.Detail
						}
					}
				}
			}
		}
	}
	if len(broken) > 0 {
		t.Errorf("attacks that broke the demo's maps (out of %d keys × 2 teams × 2 scopes): %v", keys, broken)
	}
	// a margin, so that no key of a demo run comes near the threshold
	if worst < 1.2*audit.DefaultThreshold {
		t.Errorf("the best attack reaches precision %.3g on some key (%s); the demo's ranges leave too little margin", worst, worstWhat)
	}
}

// TestSealResultIsReplayed: the Seal a seal returns (built without
// replaying the ledger again) is the one a fresh replay of the ledger
// gives, for a first seal and for a revision.
func TestSealResultIsReplayed(t *testing.T) {
	dir := buildDemo(t, "blind")
	c := open(t, dir)
	check := func(res *campaign.SealResult, team, obs string) {
		t.Helper()
		got := open(t, dir).State().Observables[obs].Latest[team]
		if !reflect.DeepEqual(res.Seal, got) {
			t.Errorf("seal result %+v, replayed %+v", res.Seal, got)
		}
	}
	tb := demoTable(t, dir, "otter", "zenith")
	res, err := c.Seal("otter", "zenith", tb, signer(t, dir, "otter"), "")
	if err != nil {
		t.Fatal(err)
	}
	check(res, "otter", "zenith")
	blindStep(t, dir)
	res, err = open(t, dir).Seal("otter", "zenith", tb, signer(t, dir, "otter"), "a second look")
	if err != nil {
		t.Fatal(err)
	}
	if !res.Revision {
		t.Errorf("a seal after the opening is not a revision")
	}
	check(res, "otter", "zenith")
}

// TestInitClock: the init entry takes its time from the campaign's clock.
func TestInitClock(t *testing.T) {
	dir := buildDemo(t, "init")
	c := open(t, dir)
	c.Now = func() time.Time { return time.Date(2031, 2, 3, 4, 5, 6, 0, time.FixedZone("x", 3600)) }
	if err := c.Init(signer(t, dir, "custodian")); err != nil {
		t.Fatal(err)
	}
	if got := open(t, dir).Ledger[0].Time; got != "2031-02-03T03:05:06Z" {
		t.Errorf("init entry time %q, want the clock's time in UTC", got)
	}
	if err := open(t, dir).Init(signer(t, dir, "custodian")); err == nil {
		t.Errorf("a second init accepted")
	}
}
