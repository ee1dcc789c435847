//go:build unix

package campaign

import (
	"fmt"
	"os"
	"syscall"
)

// Lock takes the campaign's exclusive lock (flock on .tandem.lock, never
// through a link), so two processes cannot append to the ledger at once.
// It blocks until the lock is free.
func (r root) Lock() (func(), error) {
	if err := r.check(lockFile); err != nil {
		return nil, err
	}
	f, err := os.OpenFile(r.abs(lockFile), os.O_CREATE|os.O_RDWR|oNoFollow, 0o644)
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

const oNoFollow = syscall.O_NOFOLLOW
