package format

import (
	"crypto/sha256"
	"encoding/hex"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func hexOf(s string) string { h := sha256.Sum256([]byte(s)); return hex.EncodeToString(h[:]) }

// testStatement is a valid statement: two teams, one observable, two
// columns, one failing comparison. The fingerprint is a real ed25519 one
// (ssh-keygen -l of the demo's heron key).
func testStatement(t *testing.T) *Statement {
	t.Helper()
	fp := "SHA256:W5hQau95hS1F83e6XFFV8a5Thi/sOywDtRYbGjOcMVE"
	st := &Statement{Campaign: "c-1", Party: "ibis", Role: "reviewer", Date: "2026-12-01T10:00:00Z",
		Protocol: hexOf("p"), KeyCommitment: hexOf("k"), LedgerSeq: 12, LedgerHash: hexOf("h"),
		Sealed:   []string{"heron/rate v1 " + hexOf("s1") + " by heron " + fp, "otter/rate v2 " + hexOf("s2") + " by otter " + fp},
		Blinded:  []string{"heron/rate " + hexOf("b1"), "otter/rate " + hexOf("b2")},
		Compared: []string{"rate value heron otter pass", "rate width heron otter fail"},
		Verdict:  "fail", Accepted: []string{"rate width heron otter the width differs by the known resolution model"}, AcceptedRisks: []string{"rate/value public errors"}}
	d, err := st.ComparisonDigest()
	if err != nil {
		t.Fatal(err)
	}
	st.Comparison = d
	return st
}

// TestStatementValues: each value is checked against its grammar, with
// the error naming the line and the column where the bad value starts.
func TestStatementValues(t *testing.T) {
	st := testStatement(t)
	good := string(st.Encode())
	back, err := ParseStatement("s", []byte(good))
	if err != nil {
		t.Fatalf("valid statement refused: %v", err)
	}
	if string(back.Encode()) != good {
		t.Fatal("round trip differs")
	}
	// Line numbers of the good statement: 1 header, 2 campaign, 3 party,
	// 4 role, 5 date, 6 protocol, 7 key-commitment, 8 ledger-head, 9-10
	// sealed, 11-12 blinded, 13-14 compared, 15 comparison, 16 verdict,
	// 17 accepted-disagreement (one per failing compared line), 18
	// accepted-risk.
	cases := []struct {
		name, old, new, want string
	}{
		{"campaign", "campaign: c-1", "campaign: c 1", "s:2:11: campaign: expected 1 fields"},
		{"party", "party: ibis", "party: _ibis", "s:3:8: party: the party \"_ibis\" is not a name"},
		{"role", "role: reviewer", "role: custodian", "s:4:7: role: \"custodian\" is not team or reviewer"},
		{"date", "date: 2026-12-01T10:00:00Z", "date: 2026-12-01T10:00:60Z", "s:5:7: date \"2026-12-01T10:00:60Z\" is not a UTC time"},
		{"year 0", "date: 2026-12-01T10:00:00Z", "date: 0000-12-01T10:00:00Z", "s:5:7:"},
		{"protocol", "protocol: " + hexOf("p"), "protocol: " + strings.ToUpper(hexOf("p")), "s:6:11: protocol: the protocol digest"},
		{"commitment", "key-commitment: " + hexOf("k"), "key-commitment: " + hexOf("k")[1:], "s:7:17: key-commitment: the key commitment"},
		{"head seq", "ledger-head: 12 ", "ledger-head: 012 ", "s:8:14: ledger-head: entry number \"012\""},
		{"head zero", "ledger-head: 12 ", "ledger-head: 0 ", "s:8:14:"},
		{"head hash", "ledger-head: 12 " + hexOf("h"), "ledger-head: 12 " + hexOf("h")[:63] + "g", "s:8:17: ledger-head: the entry hash"},
		{"sealed version", "otter/rate v2 ", "otter/rate 2 ", "s:10:20: sealed: version \"2\""},
		{"sealed by", "by otter", "by heron", "s:10:"},
		{"sealed word", " by otter", " from otter", "s:10:"},
		{"fingerprint", "by otter SHA256:W5hQau95hS1F83e6XFFV8a5Thi/sOywDtRYbGjOcMVE", "by otter SHA256:W5hQau95hS1F83e6XFFV8a5Thi/sOywDtRYbGjOcMVF", "s:10:"},
		{"blinded slot", "blinded: otter/rate", "blinded: otter-rate", "s:12:10: blinded: \"otter-rate\" is not TEAM/OBSERVABLE"},
		{"blinded order", "blinded: heron/rate " + hexOf("b1") + "\nblinded: otter/rate " + hexOf("b2"), "blinded: otter/rate " + hexOf("b2") + "\nblinded: heron/rate " + hexOf("b1"), "s:11:10: blinded: otter/rate where the sealed lines have heron/rate"},
		{"compared word", "rate width heron otter fail", "rate width heron otter FAIL", "s:14:34: compared: \"FAIL\" is not pass or fail"},
		{"compared self", "rate width heron otter fail", "rate width otter otter fail", "s:14:"},
		{"compared slot", "rate width heron otter fail", "rate width heron ibis fail", "s:14:11: compared: ibis/rate has no sealed and blinded line"},
		{"compared twice", "rate width heron otter fail", "rate value heron otter fail", "s:14:11: compared: rate value heron otter is listed twice"},
		{"verdict", "verdict: fail\naccepted-disagreement: rate width heron otter the width differs by the known resolution model\n", "verdict: pass\n", "s:16:10: verdict pass, but a compared line fails"},
		{"reason", "accepted-disagreement: rate width heron otter the", "accepted-disagreement: rate width heron otter th\u200fe", "s:17:49: accepted-disagreement: the reason: the character U+200F"},
		{"reason c1", "accepted-disagreement: rate width heron otter the", "accepted-disagreement: rate width heron otter \u0085the", "s:17:47: accepted-disagreement: the reason: the character U+0085"},
		{"reason missing", "accepted-disagreement: rate width heron otter the width differs by the known resolution model\n", "", "s:16:1: the failing comparison rate width heron otter has no accepted-disagreement line"},
		{"reason of a passing comparison", "accepted-disagreement: rate width", "accepted-disagreement: rate value", "s:17:24: accepted-disagreement: rate value heron otter is not the next failing compared line"},
		{"reason twice", "accepted-disagreement: rate width heron otter the width differs by the known resolution model\n", "accepted-disagreement: rate width heron otter the width differs by the known resolution model\naccepted-disagreement: rate width heron otter the width differs by the known resolution model\n", "s:18:24: accepted-disagreement: rate width heron otter is not the next failing"},
		{"reason without comparison", "accepted-disagreement: rate width heron otter the width differs by the known resolution model", "accepted-disagreement: rate width heron", "s:17:"},
		{"risk", "accepted-risk: rate/value", "accepted-risk: rate", "s:18:16: accepted-risk: \"rate\" is not OBSERVABLE/COLUMN"},
		{"digest", "compared: rate value heron otter pass", "compared: rate value heron otter fail", "s:15:13: comparison"},
		{"missing compared", "compared: rate value heron otter pass\ncompared: rate width heron otter fail\n", "", "s:13:1: expected a \"compared\" line before \"comparison\""},
		{"order", "verdict: fail\n", "", "s:16:1: expected a \"verdict\" line before \"accepted-disagreement\""},
		{"twice", "party: ibis\n", "party: ibis\nparty: ibis\n", "s:4:1: \"party\" line out of place"},
		{"no space", "role: reviewer", "role:reviewer", "s:4:6: expected exactly one space after \"role:\""},
		{"two spaces", "role: reviewer", "role:  reviewer", "s:4:7: role"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(good, c.old) {
				t.Fatalf("the test statement has no %q", c.old)
			}
			_, err := ParseStatement("s", []byte(strings.Replace(good, c.old, c.new, 1)))
			if err == nil {
				t.Fatalf("accepted")
			}
			if !strings.HasPrefix(err.Error(), c.want) {
				t.Errorf("error %q, want it to start with %q", err, c.want)
			}
		})
	}
}

// TestStatementComparisonText: the text a statement's lines give is the
// comparison text of SPEC.md section 9, written out here by hand.
func TestStatementComparisonText(t *testing.T) {
	st := testStatement(t)
	text, err := st.ComparisonText()
	if err != nil {
		t.Fatal(err)
	}
	want := "tandem/v2 comparison\nprotocol: " + hexOf("p") + "\n" +
		"rate value heron otter " + hexOf("b1") + " " + hexOf("b2") + " pass\n" +
		"rate width heron otter " + hexOf("b1") + " " + hexOf("b2") + " fail\n" +
		"verdict: fail\n"
	if string(text) != want {
		t.Errorf("comparison text\n%s\nwant\n%s", text, want)
	}
}

// TestStatementSeedsParse: the statement seeds of the fuzz corpus are
// valid statements, so the fuzzer starts from inputs that reach the end
// of the parser.
func TestStatementSeedsParse(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join("testdata", "seeds", "*.statement"))
	if len(files) == 0 {
		t.Fatal("no statement seeds")
	}
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := ParseStatement(f, data); err != nil {
			t.Errorf("%v", err)
		}
	}
}

// TestForbiddenMatchesSpec: the characters text and ledger strings may
// not hold, against the list in SPEC.md section 1 (tchar), rune by rune
// over the Basic Multilingual Plane.
func TestForbiddenMatchesSpec(t *testing.T) {
	spec := [][2]rune{{0, 0x1f}, {0x7f, 0x9f}, {0x61c, 0x61c}, {0x200e, 0x200f}, {0x2028, 0x202e}, {0x2066, 0x2069}}
	in := func(r rune) bool {
		for _, s := range spec {
			if r >= s[0] && r <= s[1] {
				return true
			}
		}
		return false
	}
	for r := rune(0); r < 0x10000; r++ {
		if Forbidden(r) != in(r) {
			t.Errorf("Forbidden(U+%04X) = %v, SPEC.md says %v", r, Forbidden(r), in(r))
		}
	}
}

// TestLedgerSeedsParse: the ledger seeds are valid ledgers.
func TestLedgerSeedsParse(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join("testdata", "seeds", "ledger*"))
	if len(files) == 0 {
		t.Fatal("no ledger seeds")
	}
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := ParseLedger(f, data); err != nil {
			t.Errorf("%v", err)
		}
	}
}
