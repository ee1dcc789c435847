//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly)

package safefs

import "os"

// Batch creates many new files and makes them durable together (see the
// Unix version). Here each file is written and synced by
// [Root.CreateExclusive] and Sync has nothing left to do.
type Batch struct{ r *Root }

// Batch starts a batch of new files beneath r.
func (r *Root) Batch() *Batch { return &Batch{r: r} }

// CreateExclusive is [Root.CreateExclusive].
func (b *Batch) CreateExclusive(rel string, data []byte, perm os.FileMode) error {
	return b.r.CreateExclusive(rel, data, perm)
}

// Sync returns nil: every file is already synced.
func (b *Batch) Sync() error { return nil }
