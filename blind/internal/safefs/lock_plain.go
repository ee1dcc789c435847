//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly || windows)

package safefs

import (
	"errors"
	"os"
)

// lockFile: this system has no advisory lock the package knows.
func lockFile(*os.File) (func() error, error) {
	return nil, errors.New("file locking is not supported on this system")
}
