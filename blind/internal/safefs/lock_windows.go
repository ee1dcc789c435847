package safefs

import (
	"os"
	"sync"

	"golang.org/x/sys/windows"
)

// lockFile takes an exclusive LockFileEx lock on f, blocking until free.
func lockFile(f *os.File) (func() error, error) {
	h := windows.Handle(f.Fd())
	ol := new(windows.Overlapped)
	if err := windows.LockFileEx(h, windows.LOCKFILE_EXCLUSIVE_LOCK, 0, 1, 0, ol); err != nil {
		return nil, err
	}
	var once sync.Once
	return func() error {
		var err error
		once.Do(func() {
			windows.UnlockFileEx(h, 0, 1, 0, ol)
			err = f.Close()
		})
		return err
	}, nil
}
