package format

import (
	"bytes"
	"fmt"
	"strconv"
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
//	blinded: T/O DIGEST                    (same order: the common-map table compared)
//	comparison: HEX                        (see the campaign's comparison digest)
//	verdict: pass|fail
//	accepted-disagreement: TEXT            (only when the verdict is fail)
//	accepted-risk: O/COLUMN TEXT           (one per column whose protocol accepts an attack's risk)
//
// KEYFP is the SHA256 fingerprint of the key that signed the seal entry,
// as ssh-keygen -l prints it ("SHA256:" and unpadded base64).
type Statement struct {
	Campaign, Party, Role, Date string
	Protocol, KeyCommitment     string
	LedgerSeq                   int
	LedgerHash                  string
	Sealed, Blinded             []string
	Comparison, Verdict         string
	Accepted                    string
	AcceptedRisks               []string
}

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
	fmt.Fprintf(&b, "comparison: %s\nverdict: %s\n", st.Comparison, st.Verdict)
	if st.Accepted != "" {
		fmt.Fprintf(&b, "accepted-disagreement: %s\n", st.Accepted)
	}
	for _, r := range st.AcceptedRisks {
		fmt.Fprintf(&b, "accepted-risk: %s\n", r)
	}
	return b.Bytes()
}

// ParseStatement parses a statement and checks it is canonical.
func ParseStatement(name string, data []byte) (*Statement, error) {
	lines := strings.Split(string(data), "\n")
	if len(lines) < 2 || lines[0] != StatementHeader || lines[len(lines)-1] != "" {
		if len(lines) > 0 && strings.HasPrefix(lines[0], "tandem/v1 ") {
			return nil, table.Errorf(name, 1, 1, "a tandem/v1 statement: this version of tandem reads %s campaigns only", blind.Version)
		}
		return nil, table.Errorf(name, 1, 1, "not a %s statement", StatementHeader)
	}
	st := &Statement{}
	for i, line := range lines[1 : len(lines)-1] {
		k, v, ok := strings.Cut(line, ": ")
		if !ok {
			return nil, table.Errorf(name, i+2, 1, "expected \"key: value\"")
		}
		switch k {
		case "campaign":
			st.Campaign = v
		case "party":
			st.Party = v
		case "role":
			st.Role = v
		case "date":
			st.Date = v
		case "protocol":
			st.Protocol = v
		case "key-commitment":
			st.KeyCommitment = v
		case "ledger-head":
			seq, hash, _ := strings.Cut(v, " ")
			n, err := strconv.Atoi(seq)
			if err != nil {
				return nil, table.Errorf(name, i+2, 14, "malformed ledger head")
			}
			st.LedgerSeq, st.LedgerHash = n, hash
		case "sealed":
			st.Sealed = append(st.Sealed, v)
		case "blinded":
			st.Blinded = append(st.Blinded, v)
		case "comparison":
			st.Comparison = v
		case "verdict":
			st.Verdict = v
		case "accepted-disagreement":
			st.Accepted = v
		case "accepted-risk":
			st.AcceptedRisks = append(st.AcceptedRisks, v)
		default:
			return nil, table.Errorf(name, i+2, 1, "unknown statement key %q", k)
		}
	}
	if !bytes.Equal(st.Encode(), data) {
		return nil, table.Errorf(name, 0, 0, "statement is not in canonical form")
	}
	return st, nil
}
