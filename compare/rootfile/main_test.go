package rootfile

import (
	"os"
	"testing"
)

// TestMain makes the test binary serve decoding requests as cmd/tandem
// does, so the tests go through the child process.
func TestMain(m *testing.M) {
	if code, served := Child(os.Stdin, os.Stdout); served {
		os.Exit(code)
	}
	os.Exit(m.Run())
}
