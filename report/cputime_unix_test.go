//go:build unix

package report

import "syscall"

// cpuTime is the CPU time the process has used, user and system, in
// nanoseconds; ok is false where it cannot be read.
func cpuTime() (ns int64, ok bool) {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0, false
	}
	return ru.Utime.Nano() + ru.Stime.Nano(), true
}
