package blind

import (
	"bytes"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"filippo.io/age"

	"tandem/compare/table"
)

// latestFiles maps every file the ledger covers to its latest digest.
func (c *Campaign) latestFiles() map[string]string {
	out := map[string]string{}
	for _, e := range c.Ledger {
		for p, d := range e.Files {
			out[p] = d
		}
	}
	return out
}

// checkFiles compares every logged file with its digest and finds files the
// ledger does not cover. reports/, keys/ (the demo's key folder) and
// dot-files are outside the trail.
func (c *Campaign) checkFiles() []string {
	var probs []string
	files := c.latestFiles()
	names := make([]string, 0, len(files))
	for p := range files {
		names = append(names, p)
	}
	sort.Strings(names)
	for _, p := range names {
		data, err := os.ReadFile(c.path(p))
		if err != nil {
			probs = append(probs, fmt.Sprintf("%s: %v", p, unwrapPath(err)))
			continue
		}
		if !constantEqualHex(digest(data), files[p]) {
			probs = append(probs, fmt.Sprintf("%s: content differs from the digest in the ledger", p))
		}
	}
	filepath.WalkDir(c.Dir, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return nil
		}
		rel, _ := filepath.Rel(c.Dir, path)
		rel = filepath.ToSlash(rel)
		if rel == "." {
			return nil
		}
		base := d.Name()
		if strings.HasPrefix(base, ".") || rel == "reports" || rel == "keys" {
			if d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if d.IsDir() || rel == LedgerFile {
			return nil
		}
		if _, ok := files[rel]; !ok {
			probs = append(probs, fmt.Sprintf("%s: not covered by the ledger (added by hand?)", rel))
		}
		return nil
	})
	return probs
}

// Report is the outcome of verify.
type Report struct {
	Problems []string
	Notes    []string
}

// OK reports whether everything held.
func (r *Report) OK() bool { return len(r.Problems) == 0 }

// Verify checks everything that can be checked without secrets: the ledger
// chain (when the campaign opened), the protocol digest, every file digest,
// every sign-off, and after unblinding the quorum and the whole chain end
// to end: K against its commitment, each true table against its seal-time
// commitment, and each blinded table recomputed from the true table and K.
func Verify(dir string) *Report {
	r := &Report{}
	c, err := Open(dir)
	if err != nil {
		var re *RefusedError
		if errors.As(err, &re) {
			r.Problems = append(r.Problems, re.Problems...)
		} else {
			r.Problems = append(r.Problems, err.Error())
		}
		return r
	}
	if !c.Started() {
		r.Problems = append(r.Problems, "the campaign has not been started (run tandem init)")
		return r
	}
	init := c.Ledger[0]
	if init.Step != "init" || init.Files[ProtocolFile] == "" {
		r.Problems = append(r.Problems, "ledger: first entry is not an init entry")
		return r
	}
	if init.Data["campaign"] != c.Protocol.Campaign {
		r.Problems = append(r.Problems, fmt.Sprintf("%s: campaign id %q differs from %q logged at init", ProtocolFile, c.Protocol.Campaign, init.Data["campaign"]))
	}
	if _, _, err := c.KeyCommitment(); err != nil {
		r.Problems = append(r.Problems, err.Error())
		return r
	}
	r.Problems = append(r.Problems, c.checkFiles()...)
	st := c.State()
	for _, s := range c.Slots() {
		ss := st[s]
		switch {
		case ss == nil:
			r.Notes = append(r.Notes, s.String()+": not sealed yet")
		case !ss.Blinded:
			r.Notes = append(r.Notes, s.String()+": sealed, not blinded yet")
		}
	}
	status, extra := c.CheckSignoffs()
	r.Problems = append(r.Problems, extra...)
	unblinded := c.Unblinded()
	for _, s := range status {
		switch {
		case !s.Present:
			r.Notes = append(r.Notes, s.Party+": has not signed off")
		case !s.Valid:
			for _, p := range s.Problems {
				if !unblinded && strings.Contains(p, "stale") {
					// A re-seal before unblinding makes old sign-offs stale;
					// that is the procedure working, not tampering.
					r.Notes = append(r.Notes, p+" (must sign again)")
					continue
				}
				r.Problems = append(r.Problems, p)
			}
		}
	}
	if unblinded {
		r.Problems = append(r.Problems, c.QuorumProblems(status)...)
		r.Problems = append(r.Problems, c.verifyUnblinded()...)
	}
	r.Problems = dedupe(r.Problems)
	return r
}

func dedupe(in []string) []string {
	seen := map[string]bool{}
	out := in[:0]
	for _, s := range in {
		if !seen[s] {
			seen[s] = true
			out = append(out, s)
		}
	}
	return out
}

// verifyUnblinded checks the chain end to end from the published key.
func (c *Campaign) verifyUnblinded() []string {
	var probs []string
	data, err := os.ReadFile(c.path(RevealedFile))
	if err != nil {
		return []string{fmt.Sprintf("%s: %v", RevealedFile, unwrapPath(err))}
	}
	k, err := parseKey(data)
	if err != nil {
		return []string{fmt.Sprintf("%s: %v", RevealedFile, err)}
	}
	salt, com, _ := c.KeyCommitment()
	if !k.Matches(salt, com) {
		return []string{RevealedFile + ": key does not match the commitment logged at init"}
	}
	st := c.State()
	for _, s := range c.Slots() {
		ss := st[s]
		if ss == nil {
			probs = append(probs, s.String()+": unblinded without a sealed table")
			continue
		}
		name := c.path(s.UnblindedPath())
		raw, err := os.ReadFile(name)
		if err != nil {
			probs = append(probs, fmt.Sprintf("%s: %v", s.UnblindedPath(), unwrapPath(err)))
			continue
		}
		f, err := DecodeTableFile(name, raw, Unblinded, c.Protocol.Observable(s.Observable))
		if err != nil {
			probs = append(probs, err.Error())
			continue
		}
		if f.Campaign != c.Protocol.Campaign || f.Team != s.Team || f.Observable != s.Observable {
			probs = append(probs, s.UnblindedPath()+": header names another campaign, team or observable")
			continue
		}
		if !constantEqualHex(f.Commitment(), ss.Commitment) {
			probs = append(probs, s.UnblindedPath()+": true table does not match its seal-time commitment")
			continue
		}
		blinded, err := os.ReadFile(c.path(s.BlindedPath()))
		if err != nil {
			probs = append(probs, fmt.Sprintf("%s: %v", s.BlindedPath(), unwrapPath(err)))
			continue
		}
		if !bytes.Equal(c.blindedFile(k, f, ss.Commitment), blinded) {
			probs = append(probs, s.BlindedPath()+": does not equal the true table blinded with the published key")
		}
	}
	return probs
}

// Unblind reveals the true tables, if and only if everything verifies and
// the quorum has signed the campaign as it stands. It checks, in order, the
// ledger chain, every file digest, every sign-off and the quorum, and then
// opens K, checks it against its commitment, decrypts every sealed table,
// checks each against its seal-time commitment, and writes the unblinded
// tables and the published key. On any problem it writes nothing and
// returns a [RefusedError] listing them all.
func (c *Campaign) Unblind(ids []age.Identity) ([]Slot, error) {
	unlock, err := c.begin("unblind")
	if err != nil {
		return nil, err
	}
	defer unlock()
	var probs []string
	probs = append(probs, c.checkFiles()...)
	st := c.State()
	for _, s := range c.Slots() {
		if ss := st[s]; ss == nil || !ss.Blinded {
			probs = append(probs, s.String()+": no blinded table")
		}
	}
	status, extra := c.CheckSignoffs()
	probs = append(probs, extra...)
	for _, s := range status {
		if s.Present && !s.Valid && !slices.Contains(c.Protocol.Quorum, s.Party) {
			probs = append(probs, s.Problems...)
		}
	}
	probs = append(probs, c.QuorumProblems(status)...)
	if len(probs) > 0 {
		return nil, &RefusedError{Step: "unblind", Problems: dedupe(probs)}
	}
	k, err := c.OpenKey(ids)
	if err != nil {
		return nil, err
	}
	out := map[string][]byte{}
	var slots []Slot
	for _, s := range c.Slots() {
		f, err := c.openSealed(s, st[s], ids)
		if err != nil {
			return nil, err
		}
		blinded, err := os.ReadFile(c.path(s.BlindedPath()))
		if err != nil {
			return nil, table.Errorf(c.path(s.BlindedPath()), 0, 0, "%v", unwrapPath(err))
		}
		if !bytes.Equal(c.blindedFile(k, f, st[s].Commitment), blinded) {
			return nil, &RefusedError{Step: "unblind", Problems: []string{s.BlindedPath() + ": does not equal the sealed table blinded with K"}}
		}
		u := *f
		u.Kind = Unblinded
		out[s.UnblindedPath()] = u.Encode()
		slots = append(slots, s)
	}
	out[RevealedFile] = k.marshal()
	files, err := c.writeLogged(out, 0o644)
	if err != nil {
		return nil, err
	}
	var signers []string
	for _, s := range status {
		if s.Valid {
			signers = append(signers, s.Party)
		}
	}
	salt, _, _ := c.KeyCommitment()
	err = c.appendEntry(Entry{Step: "unblind", Actor: c.Actor, Files: files, Data: map[string]string{
		"signed_by": strings.Join(signers, ","), "key_salt": hex.EncodeToString(salt),
	}})
	return slots, err
}
