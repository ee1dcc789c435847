package campaign

import (
	"encoding/hex"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"

	"tandem/blind"
	"tandem/blind/internal/format"
	"tandem/blind/protocol"
	"tandem/compare"
	"tandem/compare/table"
)

func hexDecode(s string) ([]byte, error) { return hex.DecodeString(s) }

// Init starts a campaign whose protocol is in place: it draws the key K,
// seals it to the custodian and logs the protocol digest and the key
// commitment, signed with the custodian's signing key. It refuses a
// campaign that has already started. It is [Open] followed by
// [Campaign.Init]; to fix the clock, open, set Now and call that.
func Init(dir string, custodian ssh.Signer) (*Campaign, error) {
	c, err := Open(dir)
	if err != nil {
		return nil, err
	}
	if err := c.Init(custodian); err != nil {
		return nil, err
	}
	return c, nil
}

// Init starts an opened campaign (see the function [Init]); the init entry
// takes its time from c.Now like every other step.
func (c *Campaign) Init(custodian ssh.Signer) error {
	_, err := c.start(custodian)
	return err
}

func (c *Campaign) start(custodian ssh.Signer) (*Campaign, error) {
	unlock, err := c.begin(StepInit)
	if err != nil {
		return nil, err
	}
	defer unlock()
	if c.Started() {
		return nil, refuse(StepInit, ProblemState, "the campaign has already started (its ledger exists)")
	}
	rcpt, err := c.Protocol.Recipient()
	if err != nil {
		return nil, err
	}
	k, err := blind.GenerateKey()
	if err != nil {
		return nil, err
	}
	salt, err := format.NewNonce()
	if err != nil {
		return nil, err
	}
	sealedKey, err := encrypt(rcpt, format.EncodeKey(k))
	if err != nil {
		return nil, err
	}
	if c.root.Exists(KeyFile) {
		// Left by an init that stopped before its ledger entry.
		if err := c.root.Remove(KeyFile); err != nil {
			return nil, err
		}
	}
	if err := c.root.CreateExclusive(KeyFile, sealedKey, 0o644); err != nil {
		return nil, err
	}
	pd, err := ProtocolDigest(c.ProtocolBytes)
	if err != nil {
		return nil, err
	}
	for _, f := range []struct{ name, body string }{{AttributesFile, gitAttributes}, {ignoreFile, gitIgnore}} {
		if !c.root.Exists(f.name) {
			if err := c.root.CreateExclusive(f.name, []byte(f.body), 0o644); err != nil {
				return nil, err
			}
		}
	}
	com := k.Commitment(salt)
	err = c.appendEntry(format.Entry{Step: string(StepInit), Actor: protocol.RoleCustodian,
		Files: map[string]string{KeyFile: format.Digest(sealedKey)},
		Data: map[string]string{
			"campaign":       c.Protocol.Campaign,
			"key_salt":       hex.EncodeToString(salt),
			"key_commitment": hex.EncodeToString(com[:]),
			"protocol":       pd,
		}}, custodian)
	return c, err
}

// KeyCommitment returns the salt and commitment logged at init.
func (c *Campaign) KeyCommitment() (salt []byte, com [32]byte, err error) {
	init := c.initEntry()
	if init == nil {
		return nil, com, fmt.Errorf("%s: the campaign has not been started (run tandem init)", c.Dir)
	}
	d := init.Data
	salt, err1 := hex.DecodeString(d["key_salt"])
	cb, err2 := hex.DecodeString(d["key_commitment"])
	if err1 != nil || err2 != nil || len(cb) != 32 || len(salt) != 32 {
		return nil, com, refuse("open", ProblemCommitment, "the init entry has a malformed key commitment")
	}
	copy(com[:], cb)
	return salt, com, nil
}

// openKey decrypts K with the custodian identity and checks it against the
// commitment logged at init.
func (c *Campaign) openKey(step Step, ids []age.Identity) (*blind.Key, error) {
	data, err := c.root.ReadFile(KeyFile, maxSmall)
	if err != nil {
		return nil, table.Errorf(c.Path(KeyFile), 0, 0, "%v", unwrapPath(err))
	}
	if !blind.EqualHex(format.Digest(data), c.State().Files[KeyFile]) {
		return nil, refuse(step, ProblemDigest, "%s differs from the file logged at init", KeyFile)
	}
	plain, err := decrypt(step, KeyFile, data, ids)
	if err != nil {
		return nil, err
	}
	k, err := format.DecodeKey(plain)
	if err != nil {
		return nil, table.Errorf(c.Path(KeyFile), 0, 0, "%v", err)
	}
	salt, com, err := c.KeyCommitment()
	if err != nil {
		return nil, err
	}
	if !k.Matches(salt, com) {
		return nil, refuse(step, ProblemCommitment, "the campaign key does not match the commitment logged at init (key swapped?)")
	}
	return k, nil
}

// gitAttributes is what init writes to .gitattributes: no file of the
// campaign is text to git, so no checkout setting (core.autocrlf, eol)
// changes a byte whose digest an entry logs.
const gitAttributes = "# written by tandem init: git must not change a byte of a campaign file\n* -text\n"

// ignoreFile keeps out of git what every clone writes for itself: the
// lock, and the reports (rewritten by "tandem report" on any site, so two
// sites committing them would conflict; any site can render them again).
const ignoreFile = ".gitignore"

const gitIgnore = "# written by tandem init: what each clone writes for itself\n/.tandem.lock\n/reports/\n"

// SealResult says what a seal did.
type SealResult struct {
	Seal *Seal
	// Stale names the parties whose sign-offs this seal made stale.
	Stale []string
	// Revision is set when the seal follows an opening of the observable:
	// it starts a new round, which every report shows.
	Revision bool
	// Removed lists files an interrupted seal had left, now removed.
	Removed []string
}

// Seal checks a team's true table against the protocol, encrypts it to the
// custodian and logs a commitment to it, signed with the team's key. It
// needs no secret, and the plaintext is never written to disk. Every
// version is its own file; earlier sign-offs become stale. A seal after the
// observable's comparison opened needs a reason.
func (c *Campaign) Seal(team, observable string, t *table.Table, signer ssh.Signer, reason string) (*SealResult, error) {
	p := c.Protocol
	ct, err := c.checkSeal(team, observable, t, reason)
	if err != nil {
		return nil, err
	}
	nonce, err := format.NewNonce()
	if err != nil {
		return nil, err
	}
	rcpt, err := p.Recipient()
	if err != nil {
		return nil, err
	}
	unlock, err := c.begin(StepSeal)
	if err != nil {
		return nil, err
	}
	defer unlock()
	st := c.State()
	obs := st.Observables[observable]
	slot := Slot{team, observable}
	version := 1
	if prev := obs.Latest[team]; prev != nil {
		version = prev.Version + 1
	}
	res := &SealResult{Revision: obs.Round() > 0}
	if err := needsReason(observable, obs.Round(), reason); err != nil {
		return nil, err
	}
	res.Stale = st.unstale()
	f := &format.TableFile{Kind: format.Sealed, Campaign: p.Campaign, Team: team, Observable: observable, Version: version, Nonce: nonce, Table: ct}
	ciphertext, err := encrypt(rcpt, f.Encode())
	if err != nil {
		return nil, err
	}
	com := f.Commitment()
	rel := slot.SealedPath(version, com)
	if err := c.removeLeftovers(strings.TrimSuffix(slot.SealedPath(version, ""), ".age")); err != nil {
		return nil, err
	}
	if err := c.root.CreateExclusive(rel, ciphertext, 0o644); err != nil {
		return nil, err
	}
	crashPoint("seal")
	data := map[string]string{"team": team, "observable": observable, "commitment": com, "version": strconv.Itoa(version)}
	if reason = strings.TrimSpace(reason); reason != "" {
		data["reason"] = reason
	}
	digest := format.Digest(ciphertext)
	if err := c.appendEntry(format.Entry{Step: string(StepSeal), Actor: team, Files: map[string]string{rel: digest}, Data: data}, signer); err != nil {
		return nil, err
	}
	// what the replay of the new entry gives, without replaying the
	// ledger again
	res.Seal = &Seal{Slot: slot, Version: version, Commitment: com, Path: rel, Digest: digest, Seq: len(c.Ledger), Reason: reason, AfterRound: obs.Round(), Entry: EntryName(&c.Ledger[len(c.Ledger)-1])}
	return res, nil
}

// CheckSeal makes the checks [Campaign.Seal] makes before it writes
// anything, on the state as it is now: the team, the observable, the
// reason, the table against the protocol, and a reason for a seal after
// the observable's comparison opened. A command sealing several tables
// checks them all first, so that a bad one seals none.
func (c *Campaign) CheckSeal(team, observable string, t *table.Table, reason string) error {
	if _, err := c.checkSeal(team, observable, t, reason); err != nil {
		return err
	}
	return needsReason(observable, c.State().Observables[observable].Round(), reason)
}

// needsReason refuses a seal without a reason after the observable's
// comparison opened (round > 0).
func needsReason(observable string, round int, reason string) error {
	if round > 0 && strings.TrimSpace(reason) == "" {
		return refuse(StepSeal, ProblemState, "%s was already opened for comparison (round %d); a new seal starts round %d and needs --reason, which every report shows", observable, round, round+1)
	}
	return nil
}

func (c *Campaign) checkSeal(team, observable string, t *table.Table, reason string) (*table.Table, error) {
	p := c.Protocol
	if q := p.Party(team); q == nil || q.Role != protocol.RoleTeam {
		return nil, fmt.Errorf("%q is not a team of campaign %s (teams: %s)", team, p.Campaign, strings.Join(p.Teams(), ", "))
	}
	o := p.Observable(observable)
	if o == nil {
		return nil, fmt.Errorf("%q is not an observable of campaign %s (observables: %s)", observable, p.Campaign, strings.Join(p.ObservableNames(), ", "))
	}
	if err := protocol.CleanText(reason); err != nil {
		return nil, fmt.Errorf("--reason: %v", err)
	}
	ct, err := Canonical(o, t)
	if err != nil {
		return nil, err
	}
	// the count tests run at the opening on these values: refuse what is
	// no event count now, where the team can fix it (the value itself is
	// not quoted)
	for _, col := range o.Columns {
		if !col.Counts {
			continue
		}
		for i, v := range ct.Column(col.Name) {
			if !compare.IsCount(v) {
				line := 0
				if i < len(t.Lines) {
					line = int(t.Lines[i])
				} else if t.Lines == nil && t.FirstLine > 0 {
					line = t.FirstLine + i
				}
				return nil, table.Errorf(t.Source, line, 0, "bin %d: column %q is declared counts = true, and its value is not an event count (a non-negative integer)", i+1, col.Name)
			}
		}
	}
	return ct, nil
}

// Canonical checks a team's table against the observable's declaration and
// returns it with exactly the declared columns in declared order: the
// edges, then each value column followed by its uncertainty columns. A
// column the protocol does not declare is refused rather than dropped, so
// nothing unblinded can ride along.
func Canonical(o *protocol.Observable, t *table.Table) (*table.Table, error) {
	var names []string
	for _, c := range o.Columns {
		names = append(names, c.Name)
		names = append(names, c.Errors...)
	}
	for _, c := range o.Columns {
		if c.Covariance {
			for j := 0; j < t.Len(); j++ {
				names = append(names, protocol.CovColumn(c.Name, j))
			}
		}
	}
	for _, x := range o.Extra {
		if !slices.Contains(names, x) {
			names = append(names, x)
		}
	}
	for _, n := range t.Names {
		if !slices.Contains(names, n) {
			return nil, table.Errorf(t.Source, 0, 0, "column %q is not declared for observable %q (declared: %s)", n, o.Name, strings.Join(names, ", "))
		}
	}
	out := &table.Table{Source: t.Source, LoName: o.Edges[0], HiName: o.Edges[1], Lo: t.Lo, Hi: t.Hi, Lines: t.Lines, FirstLine: t.FirstLine}
	for _, n := range names {
		col := t.Column(n)
		if col == nil {
			return nil, table.Errorf(t.Source, 0, 0, "observable %q needs column %q (table has: %s)", o.Name, n, strings.Join(t.Names, ", "))
		}
		out.Names = append(out.Names, n)
		out.Cols = append(out.Cols, col)
	}
	if err := out.Validate(); err != nil {
		return nil, err
	}
	for _, c := range o.Columns {
		if _, err := out.Series(c.Selection()); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// openSealed decrypts a seal and checks it against its ledger record.
func (c *Campaign) openSealed(step Step, s *Seal, ids []age.Identity) (*format.TableFile, error) {
	data, err := c.root.ReadFile(s.Path, maxTable)
	if err != nil {
		return nil, table.Errorf(c.Path(s.Path), 0, 0, "%v", unwrapPath(err))
	}
	if !blind.EqualHex(format.Digest(data), s.Digest) {
		return nil, &RefusedError{Step: step, Problems: []Problem{{Kind: ProblemDigest, Path: s.Path, Message: "file differs from the one logged at seal time"}}}
	}
	plain, err := decrypt(step, s.Path, data, ids)
	if err != nil {
		return nil, err
	}
	o := c.Protocol.Observable(s.Observable)
	f, err := format.DecodeTableFile(c.Path(s.Path), plain, format.Sealed, o.Edges[0], o.Edges[1])
	if err != nil {
		return nil, err
	}
	if f.Campaign != c.Protocol.Campaign || f.Team != s.Team || f.Observable != s.Observable || f.Version != s.Version {
		return nil, &RefusedError{Step: step, Problems: []Problem{{Kind: ProblemCommitment, Path: s.Path, Message: fmt.Sprintf("sealed for another place (%s %s/%s v%d)", f.Campaign, f.Team, f.Observable, f.Version)}}}
	}
	if !blind.EqualHex(f.Commitment(), s.Commitment) {
		return nil, &RefusedError{Step: step, Problems: []Problem{{Kind: ProblemCommitment, Path: s.Path, Message: "table does not match its seal-time commitment"}}}
	}
	return f, nil
}

// blindTable applies the maps of scope to every declared column of a
// sealed table and returns the blinded file. Any non-finite blinded
// number is refused.
func (c *Campaign) blindTable(k *blind.Key, f *format.TableFile, scope, commitment string) (*format.TableFile, error) {
	o := c.Protocol.Observable(f.Observable)
	t := f.Table
	out := &table.Table{Source: t.Source, LoName: t.LoName, HiName: t.HiName, Lo: t.Lo, Hi: t.Hi, Names: t.Names, Cols: make([][]float64, len(t.Cols))}
	copy(out.Cols, t.Cols)
	for ci := range o.Columns {
		col := &o.Columns[ci]
		m := k.Map(col.MapSpec(o.Name, scope), t.Len())
		if i := slices.Index(t.Names, col.Name); i >= 0 {
			out.Cols[i] = m.Values(t.Cols[i])
		}
		for _, e := range col.Errors {
			if i := slices.Index(t.Names, e); i >= 0 {
				out.Cols[i] = m.Errors(t.Cols[i])
			}
		}
		if col.Covariance {
			// column j holds V_ij for every row i: V'_ij = s_i s_j V_ij
			for j := 0; j < t.Len(); j++ {
				if i := slices.Index(t.Names, protocol.CovColumn(col.Name, j)); i >= 0 {
					v := make([]float64, t.Len())
					for r := range v {
						v[r] = m.S[r] * m.S[j] * t.Cols[i][r]
					}
					out.Cols[i] = v
				}
			}
		}
	}
	for ci, col := range out.Cols {
		for i, v := range col {
			if math.IsNaN(v) || math.IsInf(v, 0) || (v != 0 && math.Abs(v) < 0x1p-1022) {
				return nil, refuse(StepBlind, ProblemState, "%s/%s: blinding column %q bin %d gives %v; the table's values do not fit the declared ranges", f.Team, f.Observable, out.Names[ci], i+1, v)
			}
		}
	}
	mapName := format.MapCommon
	if scope != blind.CommonScope {
		mapName = format.MapTeam
	}
	return &format.TableFile{Kind: format.Blinded, Campaign: f.Campaign, Team: f.Team, Observable: f.Observable, Version: f.Version, Map: mapName, SealedFrom: commitment, Table: out}, nil
}
