//go:build unix

package blind

import (
	"fmt"
	"os"
	"path/filepath"
	"syscall"
)

// lock takes the campaign's exclusive lock, so two processes cannot append
// to the ledger at once (which would fork the chain). It blocks until the
// lock is free.
func lock(dir string) (func(), error) {
	f, err := os.OpenFile(filepath.Join(dir, lockFile), os.O_CREATE|os.O_RDWR, 0o644)
	if err != nil {
		return nil, fmt.Errorf("taking the campaign lock: %w", err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX); err != nil {
		f.Close()
		return nil, fmt.Errorf("taking the campaign lock: %w", err)
	}
	return func() {
		syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
		f.Close()
	}, nil
}
