package campaign_test

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tandem/blind/campaign"
	"tandem/blind/internal/format"
	"tandem/compare"
	"tandem/compare/table"
)

// countsProtocol replaces the demo's observables by one observable of
// event counts.
func countsProtocol(t *testing.T, dir string) {
	t.Helper()
	p := filepath.Join(dir, campaign.ProtocolFile)
	proto, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	head, _, ok := strings.Cut(string(proto), "[[observable]]")
	if !ok {
		t.Fatal("the demo protocol has no observable")
	}
	obs := `[[observable]]
name = "tail"
edges = ["lo", "hi"]

  [[observable.column]]
  name = "n"
  counts = true
  seed = 7
  mc_samples = 2000
  scale = [0.5, 2.0]
  shift = [-500.0, 500.0]
  accept_risk = "twenty sparse bins of a test: the self-audit may break a random key; this test checks the count tests"
`
	if err := os.WriteFile(p, []byte(head+obs), 0o644); err != nil {
		t.Fatal(err)
	}
}

// poissonTable draws 20 bins of counts with means 8·e^(−x/4), a falling
// tail with bins of a few events (no uncertainty column: a campaign's
// counts column has none).
func poissonTable(seed uint64) *table.Table {
	rng := rand.New(rand.NewPCG(seed, 1))
	t := &table.Table{Source: "tail.csv", LoName: "lo", HiName: "hi"}
	var n []float64
	for i := range 20 {
		mu := 8 * math.Exp(-float64(i)/4)
		// inversion of the Poisson CDF
		k, p := 0, math.Exp(-mu)
		for u, c := rng.Float64(), p; u > c; c += p {
			k++
			p *= mu / float64(k)
		}
		t.Lo, t.Hi = append(t.Lo, float64(i)), append(t.Hi, float64(i+1))
		n = append(n, float64(k))
	}
	t.Names, t.Cols = []string{"n"}, [][]float64{n}
	return t
}

// countsCampaign runs init, both seals and the opening of a campaign
// whose one observable is compared as counts.
func countsCampaign(t *testing.T) (dir string, a, b *table.Table) {
	t.Helper()
	dir = buildDemo(t, "init")
	countsProtocol(t, dir)
	if _, err := campaign.Init(dir, signer(t, dir, "custodian")); err != nil {
		t.Fatal(err)
	}
	a, b = poissonTable(1), poissonTable(2)
	for team, tab := range map[string]*table.Table{"heron": a, "otter": b} {
		if _, err := open(t, dir).Seal(team, "tail", tab, signer(t, dir, team), ""); err != nil {
			t.Fatal(err)
		}
	}
	return dir, a, b
}

// TestCampaignCounts: a counts column goes through the whole campaign.
// The custodian runs compare.CountTests on the true counts at the
// opening and logs the results, rounded (SPEC.md, section 7.1); compare
// judges the column by them; the parties sign, the custodian unblinds,
// and verify recomputes the logged tests from the unblinded tables.
func TestCampaignCounts(t *testing.T) {
	dir, a, b := countsCampaign(t)
	res := blindStep(t, dir)
	if strings.Join(res.Opened, ",") != "tail" {
		t.Fatalf("opened %v", res.Opened)
	}
	path := one(t, dir, "counts/tail.r1-????????????.txt")
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	f, err := format.DecodeCountsFile(path, data)
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Tests) != 1 || f.Tests[0].Seed != 7 || f.Tests[0].Samples != 2000 || len(f.Tests[0].BinP) != 20 {
		t.Fatalf("logged tests %+v", f.Tests)
	}
	// the same tests on the true counts, here
	want, err := compare.CountTests(compare.CountInput{A: a.Column("n"), B: b.Column("n")}, compare.CountSettings{Samples: 2000, Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	got := f.Tests[0]
	if got.GP != campaign.PublishP(want.GP) || got.MinPSidak != campaign.PublishP(want.MinPSidak) || got.RunsP != want.RunsP {
		t.Errorf("logged G p %v, Šidák %v, runs %v; the true counts give %v, %v, %v", got.GP, got.MinPSidak, got.RunsP, want.GP, want.MinPSidak, want.RunsP)
	}
	for i := range want.BinP {
		if p := campaign.PublishP(want.BinP[i]); !(p == got.BinP[i] || math.IsNaN(p) && math.IsNaN(got.BinP[i])) {
			t.Errorf("bin %d: logged p %v, true counts give %v (rounded %v)", i+1, got.BinP[i], want.BinP[i], p)
		}
	}
	c := open(t, dir)
	cmp, err := c.Compare()
	if err != nil {
		t.Fatal(err)
	}
	r := cmp.Summary.Entries[0].Result
	if r.Counts == nil || r.Counts.GP != got.GP {
		t.Fatalf("compare does not use the logged count tests: %+v", r.Counts)
	}
	names := []string{}
	for _, cr := range r.Criteria {
		names = append(names, cr.Name)
	}
	if !strings.Contains(strings.Join(names, ";"), compare.CritCountG) {
		t.Errorf("criteria %v lack the count criteria", names)
	}
	if cmp.Verdict != campaign.Pass {
		t.Errorf("two draws of one truth: verdict %s, criteria %+v", cmp.Verdict, r.Criteria)
	}
	for _, p := range []string{"heron", "otter", "ibis"} {
		if err := sign(t, dir, p, ""); err != nil {
			t.Fatalf("sign %s: %v", p, err)
		}
	}
	if err := unblind(t, dir); err != nil {
		t.Fatal(problems(err))
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify: %s", reportText(r))
	}
	fin, err := open(t, dir).CompareUnblinded()
	if err != nil {
		t.Fatal(err)
	}
	if cs := fin.Entries[0].Result.Counts; cs == nil || campaign.PublishP(cs.GP) != got.GP {
		t.Errorf("final comparison of the true counts: %+v, logged G p %v", cs, got.GP)
	}
}

// TestCampaignCountsLie: a custodian that logs count tests other than
// those of the true counts (a bin's p-value made larger) signs an entry
// that holds, so compare and sign take it; verify finds it once the true
// tables are unblinded (bad-commitment, naming the counts file).
func TestCampaignCountsLie(t *testing.T) {
	dir, _, _ := countsCampaign(t)
	campaign.SetCountsHook(func(f *format.CountsFile) {
		for i, p := range f.Tests[0].BinP {
			if !math.IsNaN(p) && p < 1 {
				f.Tests[0].BinP[i] = 1
				return
			}
		}
		t.Fatal("no bin to lie about")
	})
	blindStep(t, dir)
	campaign.SetCountsHook(nil)
	if r := campaign.Verify(dir); !r.OK() {
		t.Fatalf("before unblinding the lie cannot be seen, yet verify says: %s", reportText(r))
	}
	for _, p := range []string{"heron", "otter", "ibis"} {
		if err := sign(t, dir, p, ""); err != nil {
			t.Fatalf("sign %s: %v", p, err)
		}
	}
	if err := unblind(t, dir); err != nil {
		t.Fatal(problems(err))
	}
	r := campaign.Verify(dir)
	if len(r.Problems) != 1 || r.Problems[0].Kind != campaign.ProblemCommitment || !strings.HasPrefix(r.Problems[0].Path, "counts/tail.r1-") {
		t.Errorf("verify after unblinding: %s", reportText(r))
	}
}

// TestPublishP: p-values are rounded up to 1, 2, 5 × 10^k.
func TestPublishP(t *testing.T) {
	for _, c := range []struct{ in, want float64 }{
		{1, 1}, {0.7, 1}, {0.5, 0.5}, {0.4999, 0.5}, {0.21, 0.5}, {0.2, 0.2}, {0.0123, 0.02},
		{0.001, 0.001}, {0.0010001, 0.002}, {3e-9, 5e-9}, {1e-320, 1e-300},
	} {
		if got := campaign.PublishP(c.in); got != c.want {
			t.Errorf("PublishP(%v) = %v, want %v", c.in, got, c.want)
		}
	}
	if !math.IsNaN(campaign.PublishP(math.NaN())) {
		t.Error("NaN must stay NaN")
	}
}

// TestSealRefusesNonCounts: a counts column is checked at seal time,
// naming the bin and never the value.
func TestSealRefusesNonCounts(t *testing.T) {
	dir := buildDemo(t, "init")
	countsProtocol(t, dir)
	if _, err := campaign.Init(dir, signer(t, dir, "custodian")); err != nil {
		t.Fatal(err)
	}
	tb := poissonTable(1)
	tb.Cols[0][3] = 2.5
	_, err := open(t, dir).Seal("heron", "tail", tb, signer(t, dir, "heron"), "")
	if err == nil || !strings.Contains(err.Error(), "bin 4: column \"n\" is declared counts = true") || strings.Contains(err.Error(), "2.5") {
		t.Errorf("seal of a non-integer count: %v", err)
	}
}
