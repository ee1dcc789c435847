//go:build linux

package campaign

import (
	"os"

	"golang.org/x/sys/unix"
)

// sync flushes the campaign's file system once (syncfs) for many files, which covers
// every file and folder entry written since: one call instead of an fsync
// per file and per folder.
func (r root) sync(rels []string) error {
	if len(rels) == 0 {
		return nil
	}
	if len(rels) <= 4 {
		return syncEach(r, rels)
	}
	d, err := os.Open(r.dir)
	if err != nil {
		return err
	}
	defer d.Close()
	return unix.Syncfs(int(d.Fd()))
}
