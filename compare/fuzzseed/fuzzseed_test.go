package fuzzseed

import "testing"

// recorder is a testing.TB that records a Fatalf instead of stopping.
type recorder struct {
	testing.TB
	failed bool
}

func (r *recorder) Helper()               {}
func (r *recorder) Fatalf(string, ...any) { r.failed = true }
func (r *recorder) Fatal(...any)          { r.failed = true }

func TestEmptyGlobFails(t *testing.T) {
	r := &recorder{TB: t}
	Load(r, "no-such-seed-*")
	if !r.failed {
		t.Fatal("a pattern matching no seed file did not fail")
	}
}
