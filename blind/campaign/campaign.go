// Package campaign runs a tandem/v2 blinding campaign: a folder holding the
// protocol (campaign.toml), an append-only, hash-chained and signed ledger,
// each team's sealed tables, the blinded tables, the sign-offs and, at the
// end, the unblinded tables and reports.
//
// Every command opens the campaign once ([Open]), which reads the protocol
// and the ledger and replays the ledger into a [State]; the comparisons are
// computed at most once per command and shared by status, sign, unblind,
// verify and the reports.
//
// Steps, in order: init (custodian) → seal (each team, signed with its SSH
// key) → blind (custodian: each team's own map until every team has sealed
// an observable, then the common map: the comparison "opens") → compare
// (anyone) → sign (every quorum party) → unblind (custodian) → verify
// (anyone, any time). amend records a changed protocol.
//
// The package never prints and never exits.
package campaign

import (
	"bytes"
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"time"

	"tandem/blind/internal/format"
	"tandem/blind/protocol"
	"tandem/compare/table"
)

// File names inside a campaign folder.
const (
	ProtocolFile = protocol.File
	LedgerFile   = "ledger"
	KeyFile      = "key.age"
	RevealedFile = "key.revealed"
	ReportsDir   = "reports"
	lockFile     = ".tandem.lock"
)

// Size limits for files tandem reads in a campaign.
const (
	maxProtocol = 16 << 20
	maxLedger   = 1 << 30
	maxTable    = 256 << 20
	maxSmall    = 1 << 20
)

// Step is the kind of a ledger entry.
type Step string

const (
	StepInit    Step = "init"
	StepSeal    Step = "seal"
	StepBlind   Step = "blind"
	StepOpen    Step = "open"
	StepSign    Step = "sign"
	StepAmend   Step = "amend"
	StepUnblind Step = "unblind"
)

// Verdict of a comparison or of the campaign.
type Verdict string

const (
	Pass       Verdict = "pass"
	Fail       Verdict = "fail"
	Incomplete Verdict = "incomplete"
)

// ErrRefused marks a step refused by the rules of the campaign (exit 1 on
// the command line), as opposed to bad input.
var ErrRefused = errors.New("refused")

// ProblemKind classifies a [Problem].
type ProblemKind string

const (
	ProblemChain      ProblemKind = "broken-chain"
	ProblemSignature  ProblemKind = "bad-signature"
	ProblemOrder      ProblemKind = "out-of-order"
	ProblemParty      ProblemKind = "unknown-party"
	ProblemDigest     ProblemKind = "bad-digest"
	ProblemCommitment ProblemKind = "bad-commitment"
	ProblemUncovered  ProblemKind = "uncovered-file"
	ProblemLeftover   ProblemKind = "leftover"
	ProblemProtocol   ProblemKind = "protocol-changed"
	ProblemMissing    ProblemKind = "missing"
	ProblemStale      ProblemKind = "stale-signoff"
	ProblemNoSignoff  ProblemKind = "missing-signoff"
	ProblemSignoff    ProblemKind = "bad-signoff"
	ProblemSymlink    ProblemKind = "symlink"
	ProblemState      ProblemKind = "state"
)

// Problem is one thing that does not hold in a campaign.
type Problem struct {
	Kind    ProblemKind `json:"kind"`
	Path    string      `json:"path,omitempty"`
	Party   string      `json:"party,omitempty"`
	Message string      `json:"message"`
}

func (p Problem) String() string {
	if p.Path != "" {
		return p.Path + ": " + p.Message
	}
	return p.Message
}

// RefusedError lists every reason a step was refused.
type RefusedError struct {
	Step     Step
	Problems []Problem
}

func (e *RefusedError) Error() string {
	if len(e.Problems) == 1 {
		return string(e.Step) + " refused: " + e.Problems[0].String()
	}
	return fmt.Sprintf("%s refused: %d problems", e.Step, len(e.Problems))
}

func (e *RefusedError) Unwrap() error { return ErrRefused }

func refuse(step Step, kind ProblemKind, format string, args ...any) *RefusedError {
	return &RefusedError{Step: step, Problems: []Problem{{Kind: kind, Message: fmt.Sprintf(format, args...)}}}
}

// Campaign is an open campaign folder.
type Campaign struct {
	Dir           string
	Protocol      *protocol.Protocol
	ProtocolBytes []byte
	Ledger        []format.Entry
	// Now is the clock; nil means time.Now.
	Now func() time.Time

	root     root
	raw      []byte // the ledger bytes parsed so far
	torn     int    // bytes of a partial last line left by an interrupted append
	state    *State
	cmp      *Comparison
	signoffs []SignoffStatus
}

func (c *Campaign) now() time.Time {
	if c.Now != nil {
		return c.Now()
	}
	return time.Now()
}

// Open reads a campaign's protocol and ledger and replays the ledger. A
// folder with a protocol but no ledger is open but not started. A damaged
// ledger or a protocol that differs from the one the ledger records is
// refused ([ErrRefused]); [Verify] reports those as problems instead.
func Open(dir string) (*Campaign, error) {
	c, err := open(dir)
	if err != nil {
		return nil, err
	}
	if p := c.protocolProblem(); p != nil {
		return nil, &RefusedError{Step: "open", Problems: []Problem{*p}}
	}
	return c, nil
}

func open(dir string) (*Campaign, error) {
	r, err := openRoot(dir)
	if err != nil {
		if errors.Is(err, ErrSymlink) {
			return nil, refuse("open", ProblemSymlink, "%v", err)
		}
		return nil, table.Errorf(filepath.Join(dir, ProtocolFile), 0, 0, "%v", unwrapPath(err))
	}
	data, err := r.ReadFile(ProtocolFile, maxProtocol)
	if err != nil {
		if errors.Is(err, ErrSymlink) {
			return nil, refuse("open", ProblemSymlink, "%v", err)
		}
		return nil, table.Errorf(r.abs(ProtocolFile), 0, 0, "%v", unwrapPath(err))
	}
	p, err := protocol.Parse(r.abs(ProtocolFile), data)
	if err != nil {
		return nil, err
	}
	c := &Campaign{Dir: dir, Protocol: p, ProtocolBytes: data, root: r}
	if err := c.readLedger(); err != nil {
		return nil, err
	}
	return c, nil
}

func (c *Campaign) readLedger() error {
	ld, err := c.root.ReadFile(LedgerFile, maxLedger)
	switch {
	case errors.Is(err, ErrSymlink):
		return refuse("open", ProblemSymlink, "%v", err)
	case err != nil && isNotExist(err):
		c.Ledger, c.raw = nil, nil
	case err != nil:
		return table.Errorf(c.root.abs(LedgerFile), 0, 0, "%v", unwrapPath(err))
	}
	c.torn = 0
	if err == nil && len(ld) > 0 && ld[len(ld)-1] != '\n' {
		// An append interrupted mid-line: the partial line was never
		// committed. Read the whole lines; the next step removes the rest.
		cut := bytes.LastIndexByte(ld, '\n') + 1
		c.torn = len(ld) - cut
		ld = ld[:cut]
	}
	switch {
	case err != nil:
	case len(c.raw) > 0 && len(ld) >= len(c.raw) && bytes.Equal(ld[:len(c.raw)], c.raw):
		if len(ld) == len(c.raw) {
			return nil // nothing appended since
		}
		entries, err := format.ParseMore(c.root.abs(LedgerFile), c.Ledger, ld[len(c.raw):])
		if err != nil {
			return c.damaged(err)
		}
		c.Ledger, c.raw = entries, ld
	default:
		entries, err := parseLedger(c.root.abs(LedgerFile), ld)
		if err != nil {
			return c.damaged(err)
		}
		c.Ledger, c.raw = entries, ld
	}
	c.state, c.cmp, c.signoffs = nil, nil, nil
	return nil
}

// damaged reports a ledger that does not parse: a failed integrity check,
// not bad input.
func (c *Campaign) damaged(err error) error {
	return &RefusedError{Step: "open", Problems: []Problem{{Kind: ProblemChain, Path: LedgerFile, Message: strings.TrimSpace(trimPath(err.Error(), c.root.abs(LedgerFile)))}}}
}

// trimPath turns "DIR/ledger:4: msg" into "4: msg" for a Problem whose
// Path is the ledger.
func trimPath(msg, path string) string {
	return strings.TrimPrefix(msg, path+":")
}

// Started reports whether init has run.
func (c *Campaign) Started() bool { return len(c.Ledger) > 0 }

// Path returns the absolute path of a campaign-relative file.
func (c *Campaign) Path(rel string) string { return c.root.abs(rel) }

// protocolProblem compares campaign.toml with the digest the ledger
// recorded last (at init or at the latest amend).
func (c *Campaign) protocolProblem() *Problem {
	want, seq := "", 0
	for _, e := range c.Ledger {
		if (e.Step == string(StepInit) || e.Step == string(StepAmend)) && e.Files[ProtocolFile] != "" {
			want, seq = e.Files[ProtocolFile], e.Seq
		}
	}
	if want == "" || format.Digest(c.ProtocolBytes) == want {
		return nil
	}
	return &Problem{Kind: ProblemProtocol, Path: ProtocolFile, Message: fmt.Sprintf(
		"the protocol differs from the one the ledger locked at entry %d; restore it, or record the change with \"tandem amend\" (which makes every earlier sign-off stale)", seq)}
}

// crashHook, when set (by the crash tests only), is called at the points
// where an interrupted step leaves files behind: "seal", "blind", "sign",
// "unblind-files" (files written, no ledger entry yet) and
// "unblind-entry" (ledger entry written, reports not yet).
var crashHook func(point string)

func crashPoint(p string) {
	if crashHook != nil {
		crashHook(p)
	}
}
