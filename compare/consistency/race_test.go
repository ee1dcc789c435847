//go:build race

package consistency

const raceEnabled = true
