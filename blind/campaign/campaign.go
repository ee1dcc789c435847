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
	"errors"
	"fmt"
	"os"
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
	// v2LedgerFile is the one shared ledger of a tandem/v2 campaign.
	v2LedgerFile = "ledger"
	// AttributesFile tells git never to change a byte of the campaign.
	AttributesFile = ".gitattributes"
	KeyFile        = "key.age"
	RevealedFile   = "key.revealed"
	ReportsDir     = "reports"
	lockFile       = ".tandem.lock"
)

// Size limits for files tandem reads in a campaign.
const (
	maxProtocol = 16 << 20
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
	// ProblemFork: a log with two entries of one seq (two clones extended
	// it at the same time).
	ProblemFork ProblemKind = "fork"
	// ProblemEntry: an entry whose members disagree with each other or
	// with the step (a missing REQUIRED member, a file that is not the
	// step's own, a path logged twice).
	ProblemEntry ProblemKind = "bad-entry"
	// ProblemPrivateKey: a private SSH key or age identity inside the
	// campaign folder.
	ProblemPrivateKey ProblemKind = "private-key"
	// ProblemFormat: a campaign of another format version.
	ProblemFormat ProblemKind = "other-version"
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
	// Ledger holds every entry of every log, in an order that keeps each
	// log's order and puts every entry after the entries it names (see
	// [Campaign.readLogs]).
	Ledger []format.Entry
	// Now is the clock; nil means time.Now.
	Now func() time.Time

	root     root
	paths    []string         // the file of each entry of Ledger
	logs     map[string][]int // log name → indices into Ledger, by seq
	logProbs []Problem        // damaged, forked or cut logs
	forks    []forkEntry      // entries on a fork's branch not kept
	drafted  View             // the heads when Draft ran
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

// Open reads a campaign's protocol and logs and replays them. A folder
// with a protocol but no log is open but not started. Damaged, cut or
// forked logs, or a protocol whose meaning differs from the one the logs
// record, are refused ([ErrRefused]); [Verify] reports those as problems
// instead.
func Open(dir string) (*Campaign, error) {
	c, err := open(dir)
	if err != nil {
		return nil, err
	}
	if len(c.logProbs) > 0 {
		return nil, &RefusedError{Step: "open", Problems: c.logProbs}
	}
	if p := c.protocolProblem(); p != nil && c.amendProblem() == nil {
		// (after two amendments made at once, the steps explain it)
		return nil, &RefusedError{Step: "open", Problems: []Problem{*p}}
	}
	return c, nil
}

// OpenAny opens a campaign whatever the state of its logs, for the
// commands that repair them ([Campaign.Resolve]).
func OpenAny(dir string) (*Campaign, error) { return open(dir) }

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
	if err := c.readLogs(); err != nil {
		return nil, err
	}
	return c, nil
}

// trimPath turns "DIR/file:4: msg" into "4: msg" for a Problem whose
// Path is the file.
func trimPath(msg, path string) string {
	return strings.TrimPrefix(msg, path+":")
}

// Started reports whether init has run.
func (c *Campaign) Started() bool { return len(c.Ledger) > 0 }

// Path returns the absolute path of a campaign-relative file.
func (c *Campaign) Path(rel string) string { return c.root.abs(rel) }

// protocolProblem compares the meaning of campaign.toml (its
// [ProtocolDigest]) with the digest the logs recorded last (at init or at
// the latest amend).
func (c *Campaign) protocolProblem() *Problem {
	want, at := c.lockedProtocol()
	if want == "" {
		return nil
	}
	got, err := ProtocolDigest(c.ProtocolBytes)
	if err == nil && got == want {
		return nil
	}
	return &Problem{Kind: ProblemProtocol, Path: ProtocolFile, Message: fmt.Sprintf(
		"the protocol means something else than the one entry %s locked (comments, white space, line ends and key order do not count); restore it, or record the change with \"tandem amend\" (which makes every earlier sign-off stale)", at)}
}

// amendProblem reports amendments made at once in two places: the latest
// amend entry must follow every other, else which protocol is in force
// depends on an order no one chose.
func (c *Campaign) amendProblem() *Problem {
	var amends []*format.Entry
	for i := range c.Ledger {
		if e := &c.Ledger[i]; e.Step == string(StepAmend) {
			amends = append(amends, e)
		}
	}
	if len(amends) < 2 {
		return nil
	}
	last := amends[len(amends)-1]
	for _, a := range amends[:len(amends)-1] {
		if !sees(last, a) {
			return &Problem{Kind: ProblemProtocol, Path: ProtocolFile, Message: fmt.Sprintf(
				"amendments %s and %s were made at once (neither follows the other), so no one chose the protocol in force; agree on it and record it with \"tandem amend\" (its entry follows both)", EntryName(a), EntryName(last))}
		}
	}
	return nil
}

// lockedProtocol is the protocol digest of the latest init or amend entry
// and the entry's name.
func (c *Campaign) lockedProtocol() (digest, at string) {
	for i := range c.Ledger {
		e := &c.Ledger[i]
		if (e.Step == string(StepInit) || e.Step == string(StepAmend)) && e.Data["protocol"] != "" {
			digest, at = e.Data["protocol"], EntryName(e)
		}
	}
	return digest, at
}

// ProtocolDigestOf is the digest of the protocol in force, as statements
// and the comparison digest name it.
func (c *Campaign) protocolDigest() string {
	d, err := ProtocolDigest(c.ProtocolBytes)
	if err != nil {
		return format.Digest(c.ProtocolBytes)
	}
	return d
}

func unwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
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
