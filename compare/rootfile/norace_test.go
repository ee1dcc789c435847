//go:build !race

package rootfile

const defaultMutations = 500
