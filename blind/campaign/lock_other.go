//go:build !unix

package campaign

import (
	"errors"
	"fmt"
	"os"
	"time"
)

// oNoFollow is not available here; check refuses links component by
// component instead.
const oNoFollow = 0

// Lock takes the campaign's exclusive lock with an exclusively created
// file, retrying for up to a minute.
func (r root) Lock() (func(), error) {
	p := r.abs(lockFile + ".held")
	for i := 0; i < 600; i++ {
		f, err := os.OpenFile(p, os.O_CREATE|os.O_EXCL|os.O_WRONLY, 0o644)
		if err == nil {
			f.Close()
			return func() { os.Remove(p) }, nil
		}
		if !errors.Is(err, os.ErrExist) {
			return nil, fmt.Errorf("taking the campaign lock: %w", err)
		}
		time.Sleep(100 * time.Millisecond)
	}
	return nil, fmt.Errorf("campaign lock %s is held; remove it if no tandem process is running", p)
}
