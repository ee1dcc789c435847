package format

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"slices"
	"strings"

	"tandem/blind"
	"tandem/compare/table"
)

// StatementHeader starts every sign-off statement.
const StatementHeader = blind.Version + " signoff"

// SignoffNamespace is the SSHSIG namespace of sign-off signatures:
//
//	ssh-keygen -Y verify -n tandem-signoff -f allowed_signers -I PARTY -s FILE.sig < FILE
const SignoffNamespace = "tandem-signoff"

// Statement is a sign-off statement. Its canonical text is, line by line
// (each "key: value" with exactly one space after the colon):
//
//	tandem/v2 signoff
//	campaign: ID
//	party: NAME
//	role: team|reviewer
//	date: RFC3339-UTC
//	protocol: HEX                          (digest of campaign.toml in force)
//	key-commitment: HEX
//	ledger-head: SEQ HEX                   (the last entry the party saw)
//	sealed: T/O vN COMMITMENT by T KEYFP   (one per slot, protocol order: teams, then observables)
//	blinded: T/O DIGEST                    (same slots, same order: the common-map table compared)
//	compared: O COLUMN TEAM-A TEAM-B pass|fail   (one per comparison, in the comparison digest's order)
//	comparison: HEX                        (the comparison digest of the lines above)
//	verdict: pass|fail
//	accepted-disagreement: O COLUMN TEAM-A TEAM-B TEXT   (one per failing compared line, in their order)
//	accepted-risk: O/COLUMN TEXT           (one per column whose protocol accepts an attack's risk)
//
// KEYFP is the SHA256 fingerprint of the key that signed the seal entry,
// as ssh-keygen -l prints it ("SHA256:" and unpadded base64). The
// statement holds everything its comparison digest is computed from (see
// [Statement.ComparisonText]), so a signer reads, line by line, each
// verdict the digest binds.
type Statement struct {
	Campaign, Party, Role, Date string
	Protocol, KeyCommitment     string
	LedgerSeq                   int
	LedgerHash                  string
	Sealed, Blinded             []string
	// Compared lists "OBSERVABLE COLUMN TEAM-A TEAM-B VERDICT", one per
	// comparison.
	Compared            []string
	Comparison, Verdict string
	// Accepted lists "OBSERVABLE COLUMN TEAM-A TEAM-B REASON", one per
	// failing comparison, in the order of Compared.
	Accepted      []string
	AcceptedRisks []string
}

// AcceptedSeparator joins a statement's accepted-disagreement lines in the
// sign entry's member accepted_disagreement (see [AcceptedMember]).
const AcceptedSeparator = " ‖ "

// AcceptedMember is the sign entry's accepted_disagreement member of a
// statement: its accepted-disagreement values joined by
// [AcceptedSeparator] ("" when there are none).
func AcceptedMember(accepted []string) string { return strings.Join(accepted, AcceptedSeparator) }

// Encode writes the statement in its canonical text form.
func (st *Statement) Encode() []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "%s\ncampaign: %s\nparty: %s\nrole: %s\ndate: %s\nprotocol: %s\nkey-commitment: %s\nledger-head: %d %s\n",
		StatementHeader, st.Campaign, st.Party, st.Role, st.Date, st.Protocol, st.KeyCommitment, st.LedgerSeq, st.LedgerHash)
	for _, s := range st.Sealed {
		fmt.Fprintf(&b, "sealed: %s\n", s)
	}
	for _, s := range st.Blinded {
		fmt.Fprintf(&b, "blinded: %s\n", s)
	}
	for _, s := range st.Compared {
		fmt.Fprintf(&b, "compared: %s\n", s)
	}
	fmt.Fprintf(&b, "comparison: %s\nverdict: %s\n", st.Comparison, st.Verdict)
	for _, a := range st.Accepted {
		fmt.Fprintf(&b, "accepted-disagreement: %s\n", a)
	}
	for _, r := range st.AcceptedRisks {
		fmt.Fprintf(&b, "accepted-risk: %s\n", r)
	}
	return b.Bytes()
}

// ComparisonText is the text the statement's comparison digest is the
// SHA-256 of, built from the statement's own lines:
//
//	"tandem/v2 comparison" LF
//	"protocol: " PROTOCOL LF
//	for each compared line "O C A B V":
//	  O SP C SP A SP B SP DIGEST(A/O) SP DIGEST(B/O) SP V LF
//	"verdict: " VERDICT LF
//
// with DIGEST(T/O) the digest of T/O's blinded line. It is the
// campaign's comparison text when every observable is open (a campaign
// with an incomplete observable cannot be signed). It fails when a
// compared line is malformed or names a slot without a blinded line.
func (st *Statement) ComparisonText() ([]byte, error) {
	digest := map[string]string{}
	for _, l := range st.Blinded {
		slot, d, _ := strings.Cut(l, " ")
		digest[slot] = d
	}
	var b bytes.Buffer
	fmt.Fprintf(&b, "%s comparison\nprotocol: %s\n", blind.Version, st.Protocol)
	for _, l := range st.Compared {
		f := strings.Split(l, " ")
		if len(f) != 5 {
			return nil, fmt.Errorf("compared line %q does not have five fields", l)
		}
		da, okA := digest[f[2]+"/"+f[0]]
		db, okB := digest[f[3]+"/"+f[0]]
		if !okA || !okB {
			return nil, fmt.Errorf("compared line %q names a table without a blinded line", l)
		}
		fmt.Fprintf(&b, "%s %s %s %s %s %s %s\n", f[0], f[1], f[2], f[3], da, db, f[4])
	}
	fmt.Fprintf(&b, "verdict: %s\n", st.Verdict)
	return b.Bytes(), nil
}

// ComparisonDigest is the hex SHA-256 of [Statement.ComparisonText].
func (st *Statement) ComparisonDigest() (string, error) {
	text, err := st.ComparisonText()
	if err != nil {
		return "", err
	}
	h := sha256.Sum256(text)
	return hex.EncodeToString(h[:]), nil
}

// statementLine is one kind of line, in the order lines must come.
type statementLine struct {
	key         string
	min, repeat bool // min: required; repeat: may occur more than once
}

var statementLines = []statementLine{
	{"campaign", true, false}, {"party", true, false}, {"role", true, false}, {"date", true, false},
	{"protocol", true, false}, {"key-commitment", true, false}, {"ledger-head", true, false},
	{"sealed", false, true}, {"blinded", false, true}, {"compared", true, true},
	{"comparison", true, false}, {"verdict", true, false},
	{"accepted-disagreement", false, true}, {"accepted-risk", false, true},
}

// ParseStatement parses a statement, checks every value against the
// grammar of SPEC.md section 9 and the rules that tie its lines together,
// and checks it is canonical. Errors name the line and column.
func ParseStatement(name string, data []byte) (*Statement, error) {
	lines := strings.Split(string(data), "\n")
	if len(lines) < 2 || lines[0] != StatementHeader || lines[len(lines)-1] != "" {
		if len(lines) > 0 && strings.HasPrefix(lines[0], "tandem/v1 ") {
			return nil, table.Errorf(name, 1, 1, "a tandem/v1 statement: this version of tandem reads %s campaigns only", blind.Version)
		}
		if len(lines) > 0 && lines[0] == StatementHeader && lines[len(lines)-1] != "" {
			return nil, table.Errorf(name, len(lines), len(lines[len(lines)-1])+1, "the last line does not end with LF")
		}
		return nil, table.Errorf(name, 1, 1, "not a %s statement: the first line must be %q", StatementHeader, StatementHeader)
	}
	p := &stmtParser{name: name, st: &Statement{}, lineOf: map[string]int{}}
	next := 0 // index into statementLines of the next kind allowed
	for i, line := range lines[1 : len(lines)-1] {
		ln := i + 2
		k, v, ok := strings.Cut(line, ": ")
		if !ok {
			if j := strings.IndexByte(line, ':'); j > 0 {
				return nil, table.Errorf(name, ln, j+2, "expected exactly one space after %q", line[:j+1])
			}
			return nil, table.Errorf(name, ln, 1, "expected \"key: value\"")
		}
		at := slices.IndexFunc(statementLines, func(l statementLine) bool { return l.key == k })
		switch {
		case at < 0:
			return nil, table.Errorf(name, ln, 1, "unknown statement key %q", k)
		case at < next-1 || (at == next-1 && !statementLines[at].repeat):
			return nil, table.Errorf(name, ln, 1, "%q line out of place (lines come in the order %s)", k, lineOrder())
		}
		if at >= next {
			for _, l := range statementLines[next:at] {
				if l.min {
					return nil, table.Errorf(name, ln, 1, "expected a %q line before %q", l.key, k)
				}
			}
			next = at + 1
		}
		if _, seen := p.lineOf[k]; !seen {
			p.lineOf[k] = ln
		}
		if err := p.value(ln, k, v); err != nil {
			return nil, err
		}
	}
	for _, l := range statementLines[next:] {
		if l.min {
			return nil, table.Errorf(name, len(lines), 1, "the statement has no %q line", l.key)
		}
	}
	if err := p.crossCheck(); err != nil {
		return nil, err
	}
	if !bytes.Equal(p.st.Encode(), data) {
		return nil, table.Errorf(name, 0, 0, "statement is not in canonical form")
	}
	return p.st, nil
}

func lineOrder() string {
	var ks []string
	for _, l := range statementLines {
		ks = append(ks, l.key)
	}
	return strings.Join(ks, ", ")
}

type stmtParser struct {
	name   string
	st     *Statement
	lineOf map[string]int // first line of each key
}

// fields splits v at single spaces and checks each field with its rule;
// col is the column v starts at. A field error names the field's column.
func (p *stmtParser) fields(ln, col int, key, v string, rules ...func(string) error) ([]string, error) {
	f := strings.Split(v, " ")
	if len(f) != len(rules) {
		return nil, table.Errorf(p.name, ln, col, "%s: expected %d fields separated by single spaces, found %d", key, len(rules), len(f))
	}
	c := col
	for i, s := range f {
		if err := rules[i](s); err != nil {
			return nil, table.Errorf(p.name, ln, c, "%s: %v", key, err)
		}
		c += len(s) + 1
	}
	return f, nil
}

func isName(what string) func(string) error {
	return func(s string) error {
		if !ValidName(s) {
			return fmt.Errorf("%s %q is not a name (1-64 letters, digits, '_', '.' or '-', starting with a letter or digit)", what, s)
		}
		return nil
	}
}

func isHex64(what string) func(string) error {
	return func(s string) error {
		if !validHex64(s) {
			return fmt.Errorf("%s %q is not 64 lowercase hex digits", what, s)
		}
		return nil
	}
}

func isSlot(s string) error {
	t, o, ok := strings.Cut(s, "/")
	if !ok || !ValidName(t) || !ValidName(o) {
		return fmt.Errorf("%q is not TEAM/OBSERVABLE (two names)", s)
	}
	return nil
}

func isWord(words ...string) func(string) error {
	return func(s string) error {
		if !slices.Contains(words, s) {
			return fmt.Errorf("%q is not %s", s, strings.Join(words, " or "))
		}
		return nil
	}
}

func (p *stmtParser) value(ln int, k, v string) error {
	st, col := p.st, len(k)+3
	one := func(rule func(string) error) error {
		_, err := p.fields(ln, col, k, v, rule)
		return err
	}
	switch k {
	case "campaign":
		st.Campaign = v
		return one(isName("the campaign id"))
	case "party":
		st.Party = v
		return one(isName("the party"))
	case "role":
		st.Role = v
		return one(isWord("team", "reviewer"))
	case "date":
		st.Date = v
		if !validUTCTime(v) {
			return table.Errorf(p.name, ln, col, "date %q is not a UTC time to the second (2026-12-01T09:30:00Z)", v)
		}
	case "protocol":
		st.Protocol = v
		return one(isHex64("the protocol digest"))
	case "key-commitment":
		st.KeyCommitment = v
		return one(isHex64("the key commitment"))
	case "ledger-head":
		f, err := p.fields(ln, col, k, v, func(s string) error {
			if _, ok := parseCount(s); !ok {
				return fmt.Errorf("entry number %q is not 1 to 999999999 without leading zeros", s)
			}
			return nil
		}, isHex64("the entry hash"))
		if err != nil {
			return err
		}
		st.LedgerSeq, _ = parseCount(f[0])
		st.LedgerHash = f[1]
	case "sealed":
		f, err := p.fields(ln, col, k, v, isSlot, func(s string) error {
			if n, ok := strings.CutPrefix(s, "v"); !ok || !validCount(n) {
				return fmt.Errorf("version %q is not v followed by 1 to 999999999 without leading zeros", s)
			}
			return nil
		}, isHex64("the seal commitment"), isWord("by"), isName("the sealing team"), func(s string) error {
			if !validFingerprint(s) {
				return fmt.Errorf("%q is not a key fingerprint (SHA256: and 43 base64 characters of 32 bytes)", s)
			}
			return nil
		})
		if err != nil {
			return err
		}
		if team, _, _ := strings.Cut(f[0], "/"); f[4] != team {
			return table.Errorf(p.name, ln, col+len(f[0])+len(f[1])+len(f[2])+len(f[3])+4, "sealed: the seal of %s is by %q, not by its team", f[0], f[4])
		}
		st.Sealed = append(st.Sealed, v)
	case "blinded":
		if _, err := p.fields(ln, col, k, v, isSlot, isHex64("the blinded table digest")); err != nil {
			return err
		}
		st.Blinded = append(st.Blinded, v)
	case "compared":
		f, err := p.fields(ln, col, k, v, isName("the observable"), isName("the column"), isName("team A"), isName("team B"), isWord("pass", "fail"))
		if err != nil {
			return err
		}
		if f[2] == f[3] {
			return table.Errorf(p.name, ln, col+len(f[0])+len(f[1])+len(f[2])+3, "compared: team %q compared with itself", f[2])
		}
		st.Compared = append(st.Compared, v)
	case "comparison":
		st.Comparison = v
		return one(isHex64("the comparison digest"))
	case "verdict":
		st.Verdict = v
		return one(isWord("pass", "fail"))
	case "accepted-disagreement":
		f := strings.SplitN(v, " ", 5)
		at := col
		for k := 0; k < 4; k++ {
			if k >= len(f) || !ValidName(f[k]) {
				return table.Errorf(p.name, ln, at, "accepted-disagreement: OBSERVABLE COLUMN TEAM-A TEAM-B, then the reason")
			}
			at += len(f[k]) + 1
		}
		if len(f) < 5 {
			return table.Errorf(p.name, ln, at, "accepted-disagreement: the reason is missing")
		}
		if err := checkText(f[4]); err != nil {
			return table.Errorf(p.name, ln, at+textOffset(err), "accepted-disagreement: the reason: %v", err)
		}
		st.Accepted = append(st.Accepted, v)
	case "accepted-risk":
		slot, reason, _ := strings.Cut(v, " ")
		if o, c, ok := strings.Cut(slot, "/"); !ok || !ValidName(o) || !ValidName(c) {
			return table.Errorf(p.name, ln, col, "accepted-risk: %q is not OBSERVABLE/COLUMN (two names)", slot)
		}
		if err := checkText(reason); err != nil {
			return table.Errorf(p.name, ln, col+len(slot)+1+textOffset(err), "accepted-risk: the reason: %v", err)
		}
		st.AcceptedRisks = append(st.AcceptedRisks, v)
	}
	return nil
}

func validCount(s string) bool { _, ok := parseCount(s); return ok }

func textOffset(err error) int {
	var te *textError
	if errors.As(err, &te) {
		return te.at
	}
	return 0
}

// crossCheck applies the rules that tie lines together.
func (p *stmtParser) crossCheck() error {
	st := p.st
	at := func(key string, i int) int { return p.lineOf[key] + i }
	if len(st.Sealed) != len(st.Blinded) {
		return table.Errorf(p.name, p.lineOf["compared"], 1, "%d sealed lines and %d blinded lines: each slot has one of each", len(st.Sealed), len(st.Blinded))
	}
	slots := map[string]bool{}
	for i := range st.Sealed {
		s, _, _ := strings.Cut(st.Sealed[i], " ")
		b, _, _ := strings.Cut(st.Blinded[i], " ")
		if slots[s] {
			return table.Errorf(p.name, at("sealed", i), 9, "sealed: %s is listed twice", s)
		}
		if b != s {
			return table.Errorf(p.name, at("blinded", i), 10, "blinded: %s where the sealed lines have %s (the same slots in the same order)", b, s)
		}
		slots[s] = true
	}
	seen := map[string]bool{}
	fail := false
	var failing []string
	for i, l := range st.Compared {
		f := strings.Split(l, " ")
		id := strings.Join(f[:4], " ")
		if seen[id] {
			return table.Errorf(p.name, at("compared", i), 11, "compared: %s is listed twice", id)
		}
		seen[id] = true
		for _, t := range f[2:4] {
			if !slots[t+"/"+f[0]] {
				return table.Errorf(p.name, at("compared", i), 11, "compared: %s/%s has no sealed and blinded line", t, f[0])
			}
		}
		fail = fail || f[4] == "fail"
		if f[4] == "fail" {
			failing = append(failing, id)
		}
	}
	if want := map[bool]string{false: "pass", true: "fail"}[fail]; st.Verdict != want {
		return table.Errorf(p.name, p.lineOf["verdict"], 10, "verdict %s, but %s", st.Verdict,
			map[bool]string{false: "every compared line passes", true: "a compared line fails"}[fail])
	}
	risks := map[string]bool{}
	for i, r := range st.AcceptedRisks {
		c, _, _ := strings.Cut(r, " ")
		if risks[c] {
			return table.Errorf(p.name, at("accepted-risk", i), 16, "accepted-risk: %s is listed twice", c)
		}
		risks[c] = true
	}
	d, err := st.ComparisonDigest()
	if err != nil {
		return table.Errorf(p.name, p.lineOf["comparison"], 13, "%v", err)
	}
	if d != st.Comparison {
		return table.Errorf(p.name, p.lineOf["comparison"], 13, "comparison %.12s… is not the digest of the lines above (%.12s…): the listed comparisons are not the ones the digest binds", st.Comparison, d)
	}
	for i, a := range st.Accepted {
		f := strings.SplitN(a, " ", 5)
		id := strings.Join(f[:4], " ")
		if i >= len(failing) || failing[i] != id {
			return table.Errorf(p.name, at("accepted-disagreement", i), 24, "accepted-disagreement: %s is not the next failing compared line (each failing comparison has one accepted-disagreement line, in the order of the compared lines)", id)
		}
	}
	if len(st.Accepted) < len(failing) {
		ln := p.lineOf["verdict"]
		if len(st.Accepted) > 0 {
			ln = at("accepted-disagreement", len(st.Accepted)-1)
		}
		return table.Errorf(p.name, ln, 1, "the failing comparison %s has no accepted-disagreement line", failing[len(st.Accepted)])
	}
	return nil
}
