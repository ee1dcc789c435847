//go:build !linux

package rootfile

import (
	"os"
	"runtime/debug"
)

// limitMemory bounds this process, a decoding child, where the operating
// system gives no usable hard limit: only the garbage collector's target
// and the stack cap apply, with the parent's time limit behind them.
func limitMemory(n int64) {
	if n <= 0 {
		return
	}
	debug.SetMemoryLimit(n / 4 * 3)
	debug.SetMaxStack(int(min(n/8, 256<<20)))
}

// maxRSS is not measured on this platform.
func maxRSS(*os.ProcessState) int64 { return 0 }
