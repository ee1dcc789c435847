package protocol

import (
	"crypto/ed25519"
	"crypto/rand"
	"strings"
	"testing"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"
)

func pubLine(t *testing.T, name string) string {
	pub, _, err := ed25519.GenerateKey(rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	k, _ := ssh.NewPublicKey(pub)
	return strings.TrimSpace(string(ssh.MarshalAuthorizedKey(k))) + " " + name
}

// TestTemplateParses: the template, with its placeholders filled in, is a
// valid protocol whose column options decode into compare.Options.
func TestTemplateParses(t *testing.T) {
	id, _ := age.GenerateX25519Identity()
	text := Template("spectrum-2026", id.Recipient().String(), pubLine(t, "custodian"))
	for _, p := range []string{"team-a", "team-b", "reviewer"} {
		text = strings.Replace(text, `"ssh-ed25519 AAAA... `+p+`"`, `"`+pubLine(t, p)+`"`, 1)
	}
	p, err := Parse("campaign.toml", []byte(text))
	if err != nil {
		t.Fatalf("filled-in template refused: %v", err)
	}
	col := p.Observables[0].Columns[0]
	opt := col.CompareOptions(p.FamilyAlpha())
	// The template declares no correlation it does not know, so the
	// zero-correlation warning stays on until the user declares one.
	if opt.Alpha != 0.01 || opt.EdgeTol != EdgeTolerance || opt.Declared() {
		t.Errorf("options %+v", opt)
	}
	// The example in its comment, uncommented, is a valid declaration.
	good := strings.Replace(text, templateCorr, "correlations = { stat = 0.6, syst = 1.0 }", 1)
	if good == text {
		t.Fatalf("the template lost its example %q", templateCorr)
	}
	if p, err := Parse("campaign.toml", []byte(good)); err != nil {
		t.Errorf("the template's example correlation: %v", err)
	} else if o := p.Observables[0].Columns[0].CompareOptions(0.01); !o.Declared() || o.Correlations["syst"].Value != 1 {
		t.Errorf("the template's example correlation decodes to %+v", o.Correlations)
	}
	bad := strings.Replace(text, templateCorr, "correlations = { stat = 0.0, lumi = 1.0 }", 1)
	if _, err := Parse("campaign.toml", []byte(bad)); err == nil || !strings.Contains(err.Error(), `"lumi"`) {
		t.Errorf("a correlation of an undeclared source: %v", err)
	}
	bad = strings.Replace(text, templateCorr, "correlations = { stat = 1.5 }", 1)
	if _, err := Parse("campaign.toml", []byte(bad)); err == nil {
		t.Errorf("a correlation of 1.5 accepted")
	}
	bad = strings.Replace(text, templateCorr, "alpha = 0.05", 1)
	if _, err := Parse("campaign.toml", []byte(bad)); err == nil || !strings.Contains(err.Error(), "family-wise") {
		t.Errorf("a per-column alpha: %v", err)
	}
}

// templateCorr is the commented example correlation of the template.
const templateCorr = "#   correlations = { stat = 0.6, syst = 1.0 }"

func TestCleanText(t *testing.T) {
	for _, s := range []string{"ok — ünïcode", ""} {
		if err := CleanText(s); err != nil {
			t.Errorf("%q: %v", s, err)
		}
	}
	for _, s := range []string{"a\x1b[31mred", "tab\there", "rtl\u202eevil", "iso\u2066x", "bad\xffutf8", "c1\u0085"} {
		if CleanText(s) == nil {
			t.Errorf("%q accepted", s)
		}
	}
}

// TestExtraOrder: per-bin correlation columns follow the declared columns
// in the order of their sources' names, whatever order Go's map iteration
// takes (the canonical table, and so the seal commitment, depend on it).
func TestExtraOrder(t *testing.T) {
	id, _ := age.GenerateX25519Identity()
	text := Template("spectrum-2026", id.Recipient().String(), pubLine(t, "custodian"))
	for _, p := range []string{"team-a", "team-b", "reviewer"} {
		text = strings.Replace(text, `"ssh-ed25519 AAAA... `+p+`"`, `"`+pubLine(t, p)+`"`, 1)
	}
	text = strings.Replace(text, templateCorr, `correlations = { syst = "rho_syst", stat = "rho_stat" }`, 1)
	for n := 0; n < 50; n++ {
		p, err := Parse("campaign.toml", []byte(text))
		if err != nil {
			t.Fatal(err)
		}
		if got := strings.Join(p.Observables[0].Extra, ","); got != "rho_stat,rho_syst" {
			t.Fatalf("parse %d: extra columns %s, want rho_stat,rho_syst", n, got)
		}
	}
}
