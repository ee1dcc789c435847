package report

import (
	"tandem/compare"
	"testing"
)

// TestSummaryVerdict: a summary's verdict never says more than it knows.
// A missing seal (incomplete) outranks a seal waiting for the blind step
// (pending), which outranks a failing comparison; a stale sign-off shows
// only when everything made passes.
func TestSummaryVerdict(t *testing.T) {
	pass, fail := Entry{Result: &compare.Result{Pass: true}}, Entry{Result: &compare.Result{Pass: false}}
	inc := Missing{Observable: "z", Verdict: VerdictIncomplete}
	pend := Missing{Observable: "a", Verdict: VerdictPending}
	for _, c := range []struct {
		name     string
		s        Summary
		want     string
		complete bool
	}{
		{"nothing", Summary{}, VerdictPass, true},
		{"pass", Summary{Entries: []Entry{pass, pass}}, VerdictPass, true},
		{"fail", Summary{Entries: []Entry{pass, fail}}, VerdictFail, true},
		{"incomplete", Summary{Entries: []Entry{pass}, Missing: []Missing{inc}}, VerdictIncomplete, false},
		{"incomplete before pending", Summary{Missing: []Missing{pend, inc}}, VerdictIncomplete, false},
		{"pending", Summary{Entries: []Entry{pass}, Missing: []Missing{pend}}, VerdictPending, false},
		{"pending before fail", Summary{Entries: []Entry{fail}, Missing: []Missing{pend}}, VerdictPending, false},
		{"stale", Summary{Entries: []Entry{pass}, Stale: []string{"heron: x"}}, VerdictStale, false},
		{"fail before stale", Summary{Entries: []Entry{fail}, Stale: []string{"heron: x"}}, VerdictFail, false},
	} {
		if got := c.s.Verdict(); got != c.want {
			t.Errorf("%s: verdict %q, want %q", c.name, got, c.want)
		}
		if got := c.s.Complete(); got != c.complete {
			t.Errorf("%s: complete %v, want %v", c.name, got, c.complete)
		}
	}
	if n := (&Summary{Entries: []Entry{pass, fail, fail}}).Failures(); n != 2 {
		t.Errorf("failures = %d, want 2", n)
	}
}
