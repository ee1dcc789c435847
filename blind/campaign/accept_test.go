package campaign_test

import (
	"strings"
	"testing"

	"tandem/blind/campaign"
)

// TestAcceptPerComparison: the demo stopped before sign has one failing
// comparison (zenith/events). Each failing comparison needs its own
// reason, OBSERVABLE=REASON; reasons that say nothing are refused; the
// statement binds the reason to its comparison.
func TestAcceptPerComparison(t *testing.T) {
	dir := buildDemo(t, "sign")
	c := open(t, dir)
	for _, bad := range []struct{ arg, want string }{
		{"", "needs a reason for each"},
		{"the tilt is understood", "give OBSERVABLE=REASON"},
		{"zenith=", "is empty"},
		{"zenith=   ", "is empty"},
		{"zenith=ok", "has 1 word(s)"},
		{"zenith=known tilt", "has 2 word(s)"},
		{"nadir=the tilt is understood", `"nadir" is not an observable`},
		{"zenith/width=the tilt is understood", `has no column "width"`},
		{"muon_rate=the rate is fine", "that comparison agrees"},
	} {
		_, _, err := c.Draft("heron", bad.arg)
		if err == nil || !strings.Contains(err.Error()+problems(err), bad.want) {
			t.Errorf("--accept-disagreement %q: %v, want %q", bad.arg, err, bad.want)
		}
	}
	if _, _, err := c.Draft("heron", "zenith=the tilt is understood", "zenith/events=said twice over here"); err == nil || !strings.Contains(err.Error(), "two reasons") {
		t.Errorf("two reasons for one comparison: %v", err)
	}
	st, _, err := c.Draft("heron", "zenith=  otter's tower survey is out of date  ")
	if err != nil {
		t.Fatal(err)
	}
	if len(st.Accepted) != 1 || st.Accepted[0] != "zenith events heron otter otter's tower survey is out of date" {
		t.Errorf("accepted lines %q", st.Accepted)
	}
	if _, err := c.Sign(st, signer(t, dir, "heron")); err != nil {
		t.Fatal(err)
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify: %s", reportText(r))
	}
	if !strings.Contains(string(st.Encode()), "\naccepted-disagreement: zenith events heron otter otter's tower survey is out of date\n") {
		t.Errorf("statement:\n%s", st.Encode())
	}
}
