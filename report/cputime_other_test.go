//go:build !unix

package report

func cpuTime() (int64, bool) { return 0, false }
