package protocol

import (
	"errors"
	"strings"
	"testing"

	"filippo.io/age"

	"tandem/compare/table"
)

// base is a valid protocol with one observable of two columns; the cases
// of TestRefusesUnsatisfiable edit its observable block (line numbers in
// the cases count from the "[[observable]]" line, which is line 19).
func base(t *testing.T, observable string) string {
	id, _ := age.GenerateX25519Identity()
	return `format = "tandem/v2"
campaign = "c"
custodian = "` + id.Recipient().String() + `"
custodian_key = "` + pubLine(t, "custodian") + `"
quorum = ["a", "b"]

[[party]]
name = "a"
role = "team"
key = "` + pubLine(t, "a") + `"

[[party]]
name = "b"
role = "team"
key = "` + pubLine(t, "b") + `"

# the observable under test

` + observable
}

const goodObservable = `[[observable]]
name = "spectrum"
edges = ["lo", "hi"]

  [[observable.column]]
  name = "rate"
  errors = ["stat", "syst"]
  scale = [0.5, 2.0]
  shift = [-1000.0, 1000.0]

  [[observable.column]]
  name = "width"
  errors = ["width_err"]
  scale = [0.5, 2.0]
  shift = [-1000.0, 1000.0]
`

// TestRefusesUnsatisfiable: init refuses a protocol that no table could
// satisfy, naming the line and column of the offending name.
func TestRefusesUnsatisfiable(t *testing.T) {
	if _, err := Parse("campaign.toml", []byte(base(t, goodObservable))); err != nil {
		t.Fatalf("the base protocol is refused: %v", err)
	}
	cases := []struct {
		name, old, new string
		line, col      int
		msg            string
	}{
		{"error twice", `errors = ["stat", "syst"]`, `errors = ["stat", "stat"]`, 25, 21, `error column "stat" is listed twice`},
		{"error twice, literal strings", `errors = ["stat", "syst"]`, `errors = ['stat', 'stat']`, 25, 21, `error column "stat" is listed twice`},
		{"error is another value", `errors = ["stat", "syst"]`, `errors = ["stat", "width"]`, 25, 21, `is the value column of column "width"`},
		{"error is its own value", `errors = ["width_err"]`, `errors = ["width"]`, 31, 13, `error column "width" is the value column itself`},
		{"error shared by two columns", `errors = ["width_err"]`, `errors = ["syst"]`, 31, 13, `also an error column of column "rate"`},
		{"error is an edge", `errors = ["width_err"]`, `errors = ["hi"]`, 31, 13, `error column "hi" is a bin edge`},
		{"value twice", `name = "width"`, `name = "rate"`, 30, 10, `column "rate" is declared twice`},
		{"value is an edge", `name = "width"`, `name = "lo"`, 30, 10, `is a bin edge`},
		{"edges alike", `edges = ["lo", "hi"]`, `edges = ["lo", "lo"]`, 21, 1, `edges must name two different columns`},
		{"covariance name taken", "  name = \"width\"\n  errors = [\"width_err\"]", "  name = \"width\"\n  errors = [\"rate.cov.1\"]", 31, 13, `covariance matrix of column "rate"`},
		{"correlation column is a value", `shift = [-1000.0, 1000.0]

  [[observable.column]]`, `shift = [-1000.0, 1000.0]
  correlations = { stat = "width" }

  [[observable.column]]`, 28, 27, `correlation column "width" is a blinded value column`},
		{"correlation column is an edge", `errors = ["width_err"]`, `errors = ["width_err"]
  correlation = "hi"`, 32, 17, `correlation column "hi" is a bin edge`},
	}
	for _, tc := range cases {
		obs := goodObservable
		if tc.name == "covariance name taken" {
			obs = strings.Replace(obs, `name = "rate"`, "name = \"rate\"\n  covariance = true", 1)
			tc.line++
		}
		if !strings.Contains(obs, tc.old) {
			t.Fatalf("%s: %q not in the base", tc.name, tc.old)
		}
		obs = strings.Replace(obs, tc.old, tc.new, 1)
		_, err := Parse("campaign.toml", []byte(base(t, obs)))
		var te *table.Error
		if !errors.As(err, &te) {
			t.Errorf("%s: accepted or untyped error: %v", tc.name, err)
			continue
		}
		if !strings.Contains(te.Msg, tc.msg) || te.File != "campaign.toml" || te.Line != tc.line || te.Col != tc.col {
			t.Errorf("%s: got %s:%d:%d %q, want line %d column %d and %q", tc.name, te.File, te.Line, te.Col, te.Msg, tc.line, tc.col, tc.msg)
		}
	}
}

// TestErrorPositionOrder: a column whose name equals its observable's is
// found on its own line, not on the observable's, and a key placed before
// the name in its block is still found.
func TestErrorPositionOrder(t *testing.T) {
	obs := `[[observable]]
name = "rate"

  [[observable.column]]
  errors = ["stat", "stat"]
  name = "rate"
  scale = [0.5, 2.0]
  shift = [-1000.0, 1000.0]
`
	_, err := Parse("campaign.toml", []byte(base(t, obs)))
	var te *table.Error
	if !errors.As(err, &te) || te.Line != 23 || te.Col != 21 {
		t.Errorf("got %v, want campaign.toml:23:21", err)
	}
}

// TestCountsColumnRules: a counts column in a campaign names no error
// column (σ = √N would give the common map away) and no sumw2; one
// without either is accepted.
func TestCountsColumnRules(t *testing.T) {
	counts := `[[observable]]
name = "tail"

  [[observable.column]]
  name = "n"
  counts = true
  seed = 3
  scale = [0.5, 2.0]
  shift = [-1000.0, 1000.0]
`
	if _, err := Parse("campaign.toml", []byte(base(t, counts))); err != nil {
		t.Fatalf("a counts column without errors is refused: %v", err)
	}
	for name, c := range map[string]struct{ edit, msg string }{
		"errors": {"  errors = [\"stat\"]\n", "names no error column"},
		"sumw2":  {"  sumw2 = \"w2\"\n", "weighted counts (sumw2) are not compared in a campaign"},
	} {
		obs := strings.Replace(counts, "  counts = true\n", "  counts = true\n"+c.edit, 1)
		_, err := Parse("campaign.toml", []byte(base(t, obs)))
		if err == nil || !strings.Contains(err.Error(), c.msg) || !strings.Contains(err.Error(), "campaign.toml:") {
			t.Errorf("%s: %v, want %q with a position", name, err, c.msg)
		}
	}
}
