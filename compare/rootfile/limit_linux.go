package rootfile

import (
	"os"
	"runtime/debug"
	"syscall"
)

// limitMemory bounds this process, a decoding child, to about n bytes:
// RLIMIT_DATA (which counts the heap the Go runtime maps) makes a larger
// mapping fail, so the runtime stops the process, and the soft limit of
// the garbage collector keeps ordinary use below it.
func limitMemory(n int64) {
	if n <= 0 {
		return
	}
	softLimits(n)
	var cur syscall.Rlimit
	if syscall.Getrlimit(syscall.RLIMIT_DATA, &cur) == nil && cur.Max < uint64(n) {
		return // already tighter
	}
	syscall.Setrlimit(syscall.RLIMIT_DATA, &syscall.Rlimit{Cur: uint64(n), Max: uint64(n)})
}

// maxRSS is the peak resident memory of a finished child, in bytes.
func maxRSS(ps *os.ProcessState) int64 {
	if ru, ok := ps.SysUsage().(*syscall.Rusage); ok {
		return ru.Maxrss << 10 // kilobytes on Linux
	}
	return 0
}

// softLimits sets the garbage collector's memory target to 3/4 of n and
// caps goroutine stacks at n/8 (a runaway recursion fails before the
// memory limit is reached).
func softLimits(n int64) {
	debug.SetMemoryLimit(n / 4 * 3)
	debug.SetMaxStack(int(min(n/8, 256<<20)))
}
