package campaign

import (
	"os"
	"path/filepath"
	"strings"

	"golang.org/x/crypto/ssh"

	"tandem/blind/internal/format"
	"tandem/blind/internal/sshsig"
)

// SetCountsHook lets a test play a custodian that logs count tests it did
// not compute.
func SetCountsHook(f func(*format.CountsFile)) { countsHook = f }

// SetCrashHook lets the crash tests stop a child process at a chosen point.
func SetCrashHook(f func(string)) { crashHook = f }

// RewriteLogs replaces the campaign's logs with entries, in that order,
// as a forger outside tandem would write them: each log's chain
// recomputed, each entry naming the heads of the logs before it, each
// signed by the signer sign returns for it (i is the entry's index).
// Entries keep their time unless it is empty.
func RewriteLogs(dir string, entries []format.Entry, sign func(i int, e *format.Entry) ssh.Signer) error {
	if err := os.RemoveAll(filepath.Join(dir, LogDir)); err != nil {
		return err
	}
	type head struct {
		seq  int
		hash string
	}
	heads := map[string]head{}
	for i, e := range entries {
		h := heads[e.Actor]
		e.Seq, e.Prev, e.Sig = h.seq+1, format.Genesis, ""
		if h.seq > 0 {
			e.Prev = h.hash
		}
		data := map[string]string{}
		for k, v := range e.Data {
			if !strings.HasPrefix(k, afterPrefix) {
				data[k] = v
			}
		}
		for log, x := range heads {
			if log != e.Actor {
				data[afterPrefix+log] = ref(x).String()
			}
		}
		e.Data = data
		sig, err := sshsig.Sign(sign(i, &e), format.LedgerNamespace, e.SignedBytes())
		if err != nil {
			return err
		}
		e.Sig = sshsig.Flatten(sig)
		e.SetHash(format.HashLine(e.Line()))
		p := filepath.Join(dir, filepath.FromSlash(EntryPath(&e)))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			return err
		}
		if err := os.WriteFile(p, format.EncodeEntryFile(&e), 0o644); err != nil {
			return err
		}
		heads[e.Actor] = head{e.Seq, e.Hash()}
	}
	return nil
}
