package blind

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"time"

	"filippo.io/age"

	"tandem/blind/safefile"
	"tandem/compare/table"
)

// File names inside a campaign folder.
const (
	ProtocolFile = "campaign.toml"
	LedgerFile   = "ledger"
	KeyFile      = "key.age"
	RevealedFile = "key.revealed"
	lockFile     = ".tandem.lock"
)

// ErrRefused marks a step refused by the rules of the campaign (exit 1 on
// the command line), as opposed to bad input.
var ErrRefused = errors.New("refused")

// RefusedError lists every reason a step was refused.
type RefusedError struct {
	Step     string
	Problems []string
}

func (e *RefusedError) Error() string {
	if len(e.Problems) == 1 {
		return e.Step + " refused: " + e.Problems[0]
	}
	return fmt.Sprintf("%s refused: %d problems", e.Step, len(e.Problems))
}

func (e *RefusedError) Unwrap() error { return ErrRefused }

// Campaign is an open campaign folder.
type Campaign struct {
	Dir           string
	Protocol      *Protocol
	ProtocolBytes []byte
	Ledger        []Entry
	// Actor names who runs the steps, for the ledger.
	Actor string
	// Now is the clock; nil means time.Now.
	Now func() time.Time
}

func (c *Campaign) now() time.Time {
	if c.Now != nil {
		return c.Now()
	}
	return time.Now()
}

// Open reads a campaign's protocol and ledger. A folder with a protocol but
// no ledger is open but not started.
func Open(dir string) (*Campaign, error) {
	p, data, err := LoadProtocol(filepath.Join(dir, ProtocolFile))
	if err != nil {
		return nil, err
	}
	c := &Campaign{Dir: dir, Protocol: p, ProtocolBytes: data, Actor: defaultActor()}
	lp := filepath.Join(dir, LedgerFile)
	ld, err := os.ReadFile(lp)
	switch {
	case os.IsNotExist(err):
	case err != nil:
		return nil, table.Errorf(lp, 0, 0, "%v", unwrapPath(err))
	default:
		if c.Ledger, err = ParseLedger(lp, ld); err != nil {
			// A damaged ledger is a failed integrity check, not bad input.
			return nil, &RefusedError{Step: "open", Problems: []string{err.Error()}}
		}
	}
	return c, nil
}

func defaultActor() string {
	for _, v := range []string{"TANDEM_ACTOR", "USER", "LOGNAME"} {
		if s := os.Getenv(v); s != "" {
			return s
		}
	}
	return "unknown"
}

// Started reports whether init has run.
func (c *Campaign) Started() bool { return len(c.Ledger) > 0 }

func (c *Campaign) path(rel string) string { return filepath.Join(c.Dir, filepath.FromSlash(rel)) }

func digest(data []byte) string {
	h := sha256.Sum256(data)
	return hex.EncodeToString(h[:])
}

// writeLogged writes files atomically and returns their digests for the
// ledger entry.
func (c *Campaign) writeLogged(files map[string][]byte, perm os.FileMode) (map[string]string, error) {
	out := map[string]string{}
	names := make([]string, 0, len(files))
	for n := range files {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, rel := range names {
		if err := safefile.Write(c.path(rel), files[rel], perm); err != nil {
			return nil, err
		}
		out[rel] = digest(files[rel])
	}
	return out, nil
}

// Init starts a campaign whose protocol is in place: it draws the key K,
// seals it to the custodian, and logs the protocol digest and the key
// commitment. It refuses a campaign that has already started.
func Init(dir string) (*Campaign, error) {
	c, err := Open(dir)
	if err != nil {
		return nil, err
	}
	unlock, err := lock(dir)
	if err != nil {
		return nil, err
	}
	defer unlock()
	if c, err = Open(dir); err != nil {
		return nil, err
	}
	if c.Started() {
		return nil, &RefusedError{Step: "init", Problems: []string{"the campaign has already started (its ledger exists)"}}
	}
	rcpt, err := c.Protocol.Recipient()
	if err != nil {
		return nil, err
	}
	k, err := GenerateKey()
	if err != nil {
		return nil, err
	}
	salt, err := newNonce()
	if err != nil {
		return nil, err
	}
	sealedKey, err := encrypt(rcpt, k.marshal())
	if err != nil {
		return nil, err
	}
	files, err := c.writeLogged(map[string][]byte{KeyFile: sealedKey}, 0o644)
	if err != nil {
		return nil, err
	}
	files[ProtocolFile] = digest(c.ProtocolBytes)
	com := k.Commitment(salt)
	err = c.appendEntry(Entry{Step: "init", Actor: c.Actor, Files: files, Data: map[string]string{
		"campaign":       c.Protocol.Campaign,
		"key_salt":       hex.EncodeToString(salt),
		"key_commitment": hex.EncodeToString(com[:]),
	}})
	return c, err
}

func encrypt(r age.Recipient, plain []byte) ([]byte, error) {
	var buf bytes.Buffer
	w, err := age.Encrypt(&buf, r)
	if err != nil {
		return nil, fmt.Errorf("age: %w", err)
	}
	if _, err := w.Write(plain); err != nil {
		return nil, err
	}
	if err := w.Close(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

func decrypt(name string, data []byte, ids []age.Identity) ([]byte, error) {
	r, err := age.Decrypt(bytes.NewReader(data), ids...)
	if err != nil {
		var nm *age.NoIdentityMatchError
		if errors.As(err, &nm) {
			return nil, &RefusedError{Step: "decrypt", Problems: []string{name + ": the identity given is not the custodian's"}}
		}
		return nil, table.Errorf(name, 0, 0, "cannot open sealed file: %v", err)
	}
	out, err := io.ReadAll(r)
	if err != nil {
		return nil, table.Errorf(name, 0, 0, "sealed file fails authentication (damaged or tampered): %v", err)
	}
	return out, nil
}

// KeyCommitment returns the salt and commitment logged at init.
func (c *Campaign) KeyCommitment() (salt []byte, com [32]byte, err error) {
	if !c.Started() || c.Ledger[0].Step != "init" {
		return nil, com, fmt.Errorf("%s: the campaign has not been started (run tandem init)", c.Dir)
	}
	d := c.Ledger[0].Data
	salt, err1 := hex.DecodeString(d["key_salt"])
	cb, err2 := hex.DecodeString(d["key_commitment"])
	if err1 != nil || err2 != nil || len(cb) != 32 {
		return nil, com, table.Errorf(c.path(LedgerFile), 2, 0, "init entry has a malformed key commitment")
	}
	copy(com[:], cb)
	return salt, com, nil
}

// OpenKey decrypts K with the custodian identity and checks it against the
// commitment logged at init.
func (c *Campaign) OpenKey(ids []age.Identity) (*Key, error) {
	data, err := os.ReadFile(c.path(KeyFile))
	if err != nil {
		return nil, table.Errorf(c.path(KeyFile), 0, 0, "%v", unwrapPath(err))
	}
	plain, err := decrypt(c.path(KeyFile), data, ids)
	if err != nil {
		return nil, err
	}
	k, err := parseKey(plain)
	if err != nil {
		return nil, table.Errorf(c.path(KeyFile), 0, 0, "%v", err)
	}
	salt, com, err := c.KeyCommitment()
	if err != nil {
		return nil, err
	}
	if !k.Matches(salt, com) {
		return nil, &RefusedError{Step: "open key", Problems: []string{"the campaign key does not match the commitment logged at init (key swapped?)"}}
	}
	return k, nil
}

// Slot is one team's table of one observable.
type Slot struct{ Team, Observable string }

func (s Slot) String() string { return s.Team + "/" + s.Observable }

// SealedPath and BlindedPath are the campaign-relative paths of a slot's files.
func (s Slot) SealedPath() string    { return "sealed/" + s.Team + "/" + s.Observable + ".age" }
func (s Slot) BlindedPath() string   { return "blinded/" + s.Team + "/" + s.Observable + ".csv" }
func (s Slot) UnblindedPath() string { return "unblinded/" + s.Team + "/" + s.Observable + ".csv" }

// SlotState is what the ledger says about a slot.
type SlotState struct {
	Version       int
	Commitment    string // of the latest seal
	SealedDigest  string
	Blinded       bool // the latest seal has been blinded
	BlindedDigest string
	SealSeq       int
	BlindSeq      int
}

// State replays the ledger: the latest seal and blind of every slot.
func (c *Campaign) State() map[Slot]*SlotState {
	st := map[Slot]*SlotState{}
	for _, e := range c.Ledger {
		s := Slot{e.Data["team"], e.Data["observable"]}
		switch e.Step {
		case "seal":
			v, _ := strconv.Atoi(e.Data["version"])
			st[s] = &SlotState{Version: v, Commitment: e.Data["commitment"], SealedDigest: e.Files[s.SealedPath()], SealSeq: e.Seq}
		case "blind":
			if ss := st[s]; ss != nil && e.Data["sealed"] == ss.Commitment {
				ss.Blinded, ss.BlindedDigest, ss.BlindSeq = true, e.Files[s.BlindedPath()], e.Seq
			}
		}
	}
	return st
}

// Slots lists every slot the protocol expects, team-major in declared order.
func (c *Campaign) Slots() []Slot {
	var out []Slot
	for _, t := range c.Protocol.Teams() {
		for _, o := range c.Protocol.Observables {
			out = append(out, Slot{t, o.Name})
		}
	}
	return out
}

// Unblinded reports whether the campaign has been unblinded.
func (c *Campaign) Unblinded() bool {
	for _, e := range c.Ledger {
		if e.Step == "unblind" {
			return true
		}
	}
	return false
}

// Seal checks a team's true table against the protocol, encrypts it to the
// custodian and logs a commitment to it. It needs no secret, and the
// plaintext is never written to disk. Sealing a slot again logs a new
// version; earlier sign-offs then become stale.
func (c *Campaign) Seal(team, observable string, t *table.Table) (string, error) {
	if !c.Started() {
		return "", fmt.Errorf("%s: the campaign has not been started (run tandem init)", c.Dir)
	}
	if c.Unblinded() {
		return "", &RefusedError{Step: "seal", Problems: []string{"the campaign is already unblinded"}}
	}
	p := c.Protocol
	if q := p.Party(team); q == nil || q.Role != "team" {
		return "", fmt.Errorf("%q is not a team of campaign %s (teams: %v)", team, p.Campaign, p.Teams())
	}
	o := p.Observable(observable)
	if o == nil {
		return "", fmt.Errorf("%q is not an observable of campaign %s", observable, p.Campaign)
	}
	ct, err := Canonical(o, t)
	if err != nil {
		return "", err
	}
	nonce, err := newNonce()
	if err != nil {
		return "", err
	}
	f := &TableFile{Kind: Sealed, Campaign: p.Campaign, Team: team, Observable: observable, Nonce: nonce, Table: ct}
	rcpt, err := p.Recipient()
	if err != nil {
		return "", err
	}
	ciphertext, err := encrypt(rcpt, f.Encode())
	if err != nil {
		return "", err
	}
	unlock, err := lock(c.Dir)
	if err != nil {
		return "", err
	}
	defer unlock()
	if err := c.reload(); err != nil {
		return "", err
	}
	slot := Slot{team, observable}
	version := 1
	if prev := c.State()[slot]; prev != nil {
		version = prev.Version + 1
	}
	files, err := c.writeLogged(map[string][]byte{slot.SealedPath(): ciphertext}, 0o644)
	if err != nil {
		return "", err
	}
	com := f.Commitment()
	err = c.appendEntry(Entry{Step: "seal", Actor: c.Actor, Files: files, Data: map[string]string{
		"team": team, "observable": observable, "commitment": com, "version": strconv.Itoa(version),
	}})
	return com, err
}

// begin takes the campaign lock for a custodian step, rereads the ledger
// and refuses when the campaign is already unblinded. The caller runs the
// returned unlock when done.
func (c *Campaign) begin(step string) (func(), error) {
	unlock, err := lock(c.Dir)
	if err != nil {
		return nil, err
	}
	if err := c.reload(); err != nil {
		unlock()
		return nil, err
	}
	if c.Unblinded() {
		unlock()
		return nil, &RefusedError{Step: step, Problems: []string{"the campaign is already unblinded"}}
	}
	return unlock, nil
}

// reload rereads the ledger, under the lock, before an append.
func (c *Campaign) reload() error {
	fresh, err := Open(c.Dir)
	if err != nil {
		return err
	}
	if !bytes.Equal(fresh.ProtocolBytes, c.ProtocolBytes) {
		return fmt.Errorf("%s changed while the step ran", c.path(ProtocolFile))
	}
	c.Ledger = fresh.Ledger
	return nil
}

// openSealed decrypts a slot's sealed table and checks it against the
// commitment logged at seal time.
func (c *Campaign) openSealed(s Slot, st *SlotState, ids []age.Identity) (*TableFile, error) {
	name := c.path(s.SealedPath())
	data, err := os.ReadFile(name)
	if err != nil {
		return nil, table.Errorf(name, 0, 0, "%v", unwrapPath(err))
	}
	if digest(data) != st.SealedDigest {
		return nil, &RefusedError{Step: "open", Problems: []string{s.SealedPath() + ": file differs from the one logged at seal time"}}
	}
	plain, err := decrypt(name, data, ids)
	if err != nil {
		return nil, err
	}
	o := c.Protocol.Observable(s.Observable)
	f, err := DecodeTableFile(name, plain, Sealed, o)
	if err != nil {
		return nil, err
	}
	if f.Campaign != c.Protocol.Campaign || f.Team != s.Team || f.Observable != s.Observable {
		return nil, &RefusedError{Step: "open", Problems: []string{s.SealedPath() + ": sealed for another place (" + f.Campaign + " " + f.Team + "/" + f.Observable + ")"}}
	}
	if !constantEqualHex(f.Commitment(), st.Commitment) {
		return nil, &RefusedError{Step: "open", Problems: []string{s.SealedPath() + ": table does not match its seal-time commitment"}}
	}
	return f, nil
}

// Blind opens K and every sealed table not yet blinded, and writes the
// blinded tables. It returns the slots it blinded.
func (c *Campaign) Blind(ids []age.Identity) ([]Slot, error) {
	unlock, err := c.begin("blind")
	if err != nil {
		return nil, err
	}
	defer unlock()
	k, err := c.OpenKey(ids)
	if err != nil {
		return nil, err
	}
	var done []Slot
	st := c.State()
	for _, s := range c.Slots() {
		ss := st[s]
		if ss == nil || ss.Blinded {
			continue
		}
		f, err := c.openSealed(s, ss, ids)
		if err != nil {
			return done, err
		}
		data := c.blindedFile(k, f, ss.Commitment)
		files, err := c.writeLogged(map[string][]byte{s.BlindedPath(): data}, 0o644)
		if err != nil {
			return done, err
		}
		if err := c.appendEntry(Entry{Step: "blind", Actor: c.Actor, Files: files, Data: map[string]string{
			"team": s.Team, "observable": s.Observable, "sealed": ss.Commitment,
		}}); err != nil {
			return done, err
		}
		done = append(done, s)
	}
	return done, nil
}

func (c *Campaign) blindedFile(k *Key, f *TableFile, commitment string) []byte {
	o := c.Protocol.Observable(f.Observable)
	bt := k.Apply(o, f.Table)
	bf := &TableFile{Kind: Blinded, Campaign: f.Campaign, Team: f.Team, Observable: f.Observable, SealedFrom: commitment, Table: bt}
	return bf.Encode()
}

// ReadTable reads a blinded or unblinded table of a slot from the campaign,
// checking its digest against the ledger for blinded tables.
func (c *Campaign) ReadTable(s Slot, kind TableKind) (*table.Table, error) {
	rel := s.BlindedPath()
	if kind == Unblinded {
		rel = s.UnblindedPath()
	}
	name := c.path(rel)
	data, err := os.ReadFile(name)
	if err != nil {
		return nil, table.Errorf(name, 0, 0, "%v", unwrapPath(err))
	}
	if kind == Blinded {
		if ss := c.State()[s]; ss == nil || !ss.Blinded || ss.BlindedDigest != digest(data) {
			return nil, &RefusedError{Step: "read", Problems: []string{rel + ": not the blinded table the ledger records"}}
		}
	}
	f, err := DecodeTableFile(name, data, kind, c.Protocol.Observable(s.Observable))
	if err != nil {
		return nil, err
	}
	return f.Table, nil
}
