//go:build darwin || freebsd || netbsd || openbsd || dragonfly

package safefs

import "golang.org/x/sys/unix"

// syncFS is not available: [Batch.Sync] fsyncs file by file.
func syncFS(int) error { return unix.ENOSYS }
