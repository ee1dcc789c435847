package campaign

import "tandem/blind/internal/format"

// SetCrashHook lets the crash tests stop a child process at a chosen point.
func SetCrashHook(f func(string)) { crashHook = f }

// ParseLedgerHalves is parseLedger with the two halves parsed at once
// whatever the ledger's size.
func ParseLedgerHalves(path string, data []byte) ([]format.Entry, error) {
	save := parallelLedger
	parallelLedger = 0
	defer func() { parallelLedger = save }()
	return parseLedger(path, data)
}
