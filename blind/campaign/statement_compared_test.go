package campaign

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestComparedDiff: how a statement's compared lines differ from the
// recomputed ones is said comparison by comparison.
func TestComparedDiff(t *testing.T) {
	cur := []string{"flux value a b pass", "ratio r a b pass"}
	cases := []struct {
		stated []string
		want   string
	}{
		{cur, ""},
		{[]string{"flux value a b fail", "ratio r a b pass"}, "flux value a b is listed fail, the blinded tables give pass"},
		{[]string{"ratio r a b pass", "flux value a b pass"}, "the comparisons are listed in another order"},
		{[]string{"flux value a b pass"}, "ratio r a b is missing"},
		{[]string{"flux value a b pass", "ratio r a b pass", "ratio s a b pass"}, "ratio s a b is not a comparison of the campaign"},
		{nil, "flux value a b is missing; ratio r a b is missing"},
	}
	for _, c := range cases {
		if got := comparedDiff(c.stated, cur); got != c.want {
			t.Errorf("comparedDiff(%q) = %q, want %q", c.stated, got, c.want)
		}
	}
}

// TestSignedWrongVerdict: a sign-off whose compared lines give a wrong
// verdict for one comparison, with a comparison digest that hashes the
// listed lines (so the statement parses), is a comparison mismatch for
// verify, and unblind refuses it without revealing anything.
func TestSignedWrongVerdict(t *testing.T) {
	g := newGen(t).blinded()
	g.sign("team-a")
	g.sign("team-b")
	g.forgeSign("reviewer", "reviewer", func(st *Statement) {
		st.Compared[1] = strings.Replace(st.Compared[1], " pass", " fail", 1)
		st.Verdict, st.Accepted = "fail", []string{strings.TrimSuffix(st.Compared[1], " fail") + " a reason of several words"}
		d, err := st.ComparisonDigest()
		if err != nil {
			t.Fatal(err)
		}
		st.Comparison = d
	})
	r := Verify(g.dir)
	if outcomeOf(r) != string(ProblemComparison) {
		t.Fatalf("verify outcome %q, want %s: %v", outcomeOf(r), ProblemComparison, r.Problems)
	}
	want := "sign-off of reviewer lists other comparisons than the blinded tables give: ratio r team-a team-b is listed fail, the blinded tables give pass"
	found := false
	for _, p := range r.Problems {
		found = found || (p.Kind == ProblemComparison && p.Message == want)
	}
	if !found {
		t.Errorf("no problem %q in %v", want, r.Problems)
	}
	_, err := g.open().Unblind(g.ids, g.signers["custodian"])
	var re *RefusedError
	if !errors.As(err, &re) {
		t.Fatalf("unblind: %v, want a refusal", err)
	}
	kinds := map[ProblemKind]bool{}
	for _, p := range re.Problems {
		kinds[p.Kind] = true
	}
	if !kinds[ProblemComparison] {
		t.Errorf("unblind refused for %v, not for the comparison mismatch", re.Problems)
	}
	if _, err := os.Stat(filepath.Join(g.dir, RevealedFile)); !os.IsNotExist(err) {
		t.Errorf("key revealed after a refusal")
	}
}

// TestSecondInitKind: a second init entry is reported as second-init.
func TestSecondInitKind(t *testing.T) {
	g := newGen(t).blinded()
	g.rawAppend(g.open().Ledger[0], g.signers["custodian"])
	r := Verify(g.dir)
	if got := outcomeOf(r); got != string(ProblemSecondInit) {
		t.Fatalf("outcome %q, want %s: %v", got, ProblemSecondInit, r.Problems)
	}
}
