package campaign_test

import (
	"bytes"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tandem/blind/campaign"
)

// snapshot maps every file below dir to its bytes.
func snapshot(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	out := map[string][]byte{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		rel, _ := filepath.Rel(dir, p)
		out[filepath.ToSlash(rel)] = b
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// clone copies a campaign folder, as a git clone of it would hold it.
func clone(t *testing.T, src string) string {
	t.Helper()
	dst := filepath.Join(t.TempDir(), "clone")
	if err := os.CopyFS(dst, os.DirFS(src)); err != nil {
		t.Fatal(err)
	}
	return dst
}

// merge does what a three-way merge of the clones does with their
// changes since base, and fails the test where git would stop with a
// conflict: a file of base changed or removed in a clone, or one path
// added by two clones with different bytes.
func merge(t *testing.T, base map[string][]byte, into string, clones ...string) {
	t.Helper()
	added := map[string][]byte{}
	for _, c := range clones {
		for rel, b := range snapshot(t, c) {
			if old, ok := base[rel]; ok {
				if !bytes.Equal(old, b) {
					t.Errorf("%s: a step rewrote %s (a merge conflict when another clone rewrites it too)", c, rel)
				}
				continue
			}
			if prev, ok := added[rel]; ok && !bytes.Equal(prev, b) {
				t.Errorf("%s: added by two clones with different bytes (a merge conflict)", rel)
			}
			added[rel] = b
		}
		for rel := range base {
			if _, err := os.Stat(filepath.Join(c, filepath.FromSlash(rel))); err != nil {
				t.Errorf("%s: a step removed %s", c, rel)
			}
		}
	}
	for rel, b := range added {
		p := filepath.Join(into, filepath.FromSlash(rel))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// TestClonesMerge: the three sign-offs taken in three clones at once,
// and a seal and a blind taken in two clones at once, merge without a
// conflict and verify; the campaign then goes on in the merged folder.
func TestClonesMerge(t *testing.T) {
	t.Run("three sign-offs", func(t *testing.T) {
		dir := buildDemo(t, "sign")
		base := snapshot(t, dir)
		var clones []string
		for _, p := range []string{"heron", "otter", "ibis"} {
			c := clone(t, dir)
			cp := open(t, c)
			st, _, err := cp.Draft(p, "zenith=the tilt is understood")
			if err != nil {
				t.Fatal(err)
			}
			if _, err := cp.Sign(st, signer(t, dir, p)); err != nil {
				t.Fatal(err)
			}
			clones = append(clones, c)
		}
		merge(t, base, dir, clones...)
		r := campaign.Verify(dir)
		if !r.OK() {
			t.Fatalf("verify after the merge: %s", reportText(r))
		}
		for _, s := range open(t, dir).Signoffs() {
			if !s.Valid {
				t.Errorf("%s's sign-off does not hold after the merge: %v", s.Party, s.Problems)
			}
		}
		if err := unblind(t, dir); err != nil {
			t.Fatalf("unblind after the merge: %s", problems(err))
		}
		if r := campaign.Verify(dir); !r.OK() {
			t.Fatalf("verify after unblind: %s", reportText(r))
		}
	})
	t.Run("seal and blind at once", func(t *testing.T) {
		dir := buildDemo(t, "blind") // heron sealed and blinded, otter sealed
		base := snapshot(t, dir)
		a, b := clone(t, dir), clone(t, dir)
		// opens every observable on the seals it sees
		if _, err := open(t, a).Blind(identity(t, dir), signer(t, dir, "custodian")); err != nil {
			t.Fatal(err)
		}
		tb := demoTable(t, buildDemoOnce(t), "heron", "zenith")
		if _, err := open(t, b).Seal("heron", "zenith", tb, signer(t, dir, "heron"), "a second pass"); err != nil {
			t.Fatal(err)
		}
		merge(t, base, dir, a, b)
		r := campaign.Verify(dir)
		if !r.OK() {
			t.Fatalf("verify after the merge: %s", reportText(r))
		}
		c := open(t, dir)
		if c.State().Observables["zenith"].Open([]string{"heron", "otter"}) {
			t.Errorf("zenith is open on heron's v1 though heron sealed v2")
		}
		st, err := c.Status()
		if err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(strings.Join(actions(st), "\n"), "custodian: blind") {
			t.Errorf("status after the merge does not ask the custodian to blind: %v", st.Next)
		}
		blindStep(t, dir)
		c = open(t, dir)
		if !c.State().Observables["zenith"].Open([]string{"heron", "otter"}) {
			t.Errorf("zenith not open on heron's v2 after the next blind")
		}
		if r := campaign.Verify(dir); !r.OK() {
			t.Fatalf("verify after the next blind: %s", reportText(r))
		}
	})
}

func actions(st *campaign.Status) []string {
	var out []string
	for _, a := range st.Next {
		out = append(out, a.String())
	}
	return out
}

// TestResolveFork: heron signs in two clones; merged, heron's log has
// forked and every step is refused. resolve removes the branch not kept,
// unless another party's entry follows it, which it refuses.
func TestResolveFork(t *testing.T) {
	dir := buildDemo(t, "sign")
	base := snapshot(t, dir)
	a, b := clone(t, dir), clone(t, dir)
	for i, c := range []string{a, b} {
		cp := open(t, c)
		st, _, err := cp.Draft("heron", []string{"zenith=the tilt is understood", "zenith=the tilt is understood, on the second machine"}[i])
		if err != nil {
			t.Fatal(err)
		}
		if _, err := cp.Sign(st, signer(t, dir, "heron")); err != nil {
			t.Fatal(err)
		}
	}
	merged := clone(t, dir)
	merge(t, base, merged, a, b)
	if _, err := campaign.Open(merged); err == nil || !strings.Contains(err.Error(), "forked") && !strings.Contains(problems(err), "forked") {
		t.Fatalf("open of a forked campaign: %v", err)
	}
	c, err := campaign.OpenAny(merged)
	if err != nil {
		t.Fatal(err)
	}
	// which clone holds the branch not kept: otter signs there, after it
	r := campaign.Verify(merged)
	notKept := ""
	for _, p := range r.Problems {
		if p.Kind == campaign.ProblemFork {
			notKept = p.Message[strings.Index(p.Message, "not kept: ")+len("not kept: "):]
			notKept = notKept[:strings.Index(notKept, ".")]
		}
	}
	if notKept == "" {
		t.Fatalf("no fork reported: %s", reportText(r))
	}
	loser := a
	if _, err := os.Stat(filepath.Join(b, filepath.FromSlash(notKept))); err == nil {
		loser = b
	}
	withOtter := clone(t, merged)
	lb := snapshot(t, loser)
	cp := open(t, loser)
	st, _, err := cp.Draft("otter", "zenith=the tilt is understood")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := cp.Sign(st, signer(t, dir, "otter")); err != nil {
		t.Fatal(err)
	}
	merge(t, lb, withOtter, loser)
	co, err := campaign.OpenAny(withOtter)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := co.Resolve(); err == nil || !strings.Contains(problems(err), "not kept") {
		t.Errorf("resolve removed an entry another log follows: %v (%s)", err, problems(err))
	}
	// without otter's entry, resolve removes the branch and the campaign goes on
	res, err := c.Resolve()
	if err != nil {
		t.Fatalf("resolve: %s", problems(err))
	}
	if len(res.Entries) != 1 || res.Entries[0] != notKept || len(res.Files) != 2 {
		t.Errorf("resolve removed %v and %v", res.Entries, res.Files)
	}
	if r := campaign.Verify(merged); !r.OK() {
		t.Fatalf("verify after resolve: %s", reportText(r))
	}
	if _, err := open(t, merged).Status(); err != nil {
		t.Fatal(err)
	}
}

// TestConcurrentAmends: two parties amend the protocol in two clones at
// once. However git joins campaign.toml, no one chose the protocol in
// force: verify says so and steps are refused, until an amend that
// follows both records the protocol agreed on.
func TestConcurrentAmends(t *testing.T) {
	for _, keep := range []int{0, 1} {
		t.Run(fmt.Sprint("keep ", keep), func(t *testing.T) { concurrentAmends(t, keep) })
	}
}

func concurrentAmends(t *testing.T, keep int) {
	dir := buildDemo(t, "sign")
	base := snapshot(t, dir)
	clones := []string{clone(t, dir), clone(t, dir)}
	good, _ := os.ReadFile(filepath.Join(dir, campaign.ProtocolFile))
	next := [][]byte{
		[]byte(strings.Replace(string(good), "shift = [-10000.0, 10000.0]", "shift = [-10000.0, 10000.0]\n  max_pull = 5.0", 1)),
		[]byte(strings.Replace(string(good), "shift = [-10000.0, 10000.0]", "shift = [-10000.0, 10000.0]\n  max_pull = 4.0", 1)),
	}
	for i, who := range []string{"ibis", "heron"} {
		if _, err := open(t, clones[i]).Amend(who, next[i], "a pull limit", signer(t, dir, who)); err != nil {
			t.Fatal(err)
		}
		// git stops on campaign.toml, which both changed
		os.WriteFile(filepath.Join(clones[i], campaign.ProtocolFile), good, 0o644)
	}
	merge(t, base, dir, clones...)
	// whoever resolves git's conflict keeps one of the two versions
	os.WriteFile(filepath.Join(dir, campaign.ProtocolFile), next[keep], 0o644)
	r := campaign.Verify(dir)
	if r.OK() || !strings.Contains(reportText(r), "made at once") {
		t.Fatalf("verify after two amends at once: %s", reportText(r))
	}
	c := open(t, dir)
	if _, err := c.Seal("heron", "zenith", demoTable(t, buildDemoOnce(t), "heron", "zenith"), signer(t, dir, "heron"), "x"); err == nil || !strings.Contains(problems(err), "made at once") {
		t.Errorf("seal after two amends at once: %v (%s)", err, problems(err))
	}
	if _, err := open(t, dir).Amend("ibis", next[keep], "agreed", signer(t, dir, "ibis")); err != nil {
		t.Fatalf("the amend that follows both: %v (%s)", err, problems(err))
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Fatalf("verify after the agreeing amend: %s", reportText(r))
	}
}
