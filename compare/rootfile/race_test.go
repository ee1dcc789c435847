//go:build race

package rootfile

// Under the race detector every child is an instrumented copy that takes
// about 0.3 s to start, so TestMutations tries fewer files by default.
const defaultMutations = 100
