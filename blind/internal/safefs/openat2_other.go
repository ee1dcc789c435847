//go:build darwin || freebsd || netbsd || openbsd || dragonfly

package safefs

import "golang.org/x/sys/unix"

// Only Linux has openat2(2); elsewhere every path is walked.
func haveOpenat2(int) bool { return false }

func openat2(int, string, int, uint32) (int, error) { return -1, unix.ENOSYS }
