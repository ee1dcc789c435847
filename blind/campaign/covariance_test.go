package campaign_test

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"tandem/blind/campaign"
	"tandem/blind/protocol"
	"tandem/compare"
	"tandem/compare/table"
)

// covTable is a 6-bin table with a covariance matrix
// V_ij = σ_i σ_j 0.3^|i−j| carried as the columns y.cov.1 … y.cov.6.
func covTable(shiftBy float64) *table.Table {
	t := &table.Table{Source: "cov.csv", LoName: "lo", HiName: "hi"}
	n := 6
	var v, e []float64
	for i := 0; i < n; i++ {
		t.Lo, t.Hi = append(t.Lo, float64(i)), append(t.Hi, float64(i+1))
		v = append(v, 1000+40*float64(i)+shiftBy*float64(i%3))
		e = append(e, 25+float64(i))
	}
	t.Names, t.Cols = []string{"y", "err"}, [][]float64{v, e}
	for j := 0; j < n; j++ {
		col := make([]float64, n)
		for i := range col {
			col[i] = e[i] * e[j] * math.Pow(0.3, math.Abs(float64(i-j)))
		}
		t.Names, t.Cols = append(t.Names, protocol.CovColumn("y", j)), append(t.Cols, col)
	}
	return t
}

// TestCampaignCovariance: each team seals its covariance matrix with its
// table; blinding scales it by s_i s_j; χ² = dᵀ W⁻¹ d on the blinded
// tables equals χ² on the true tables to 1e-12 relative.
func TestCampaignCovariance(t *testing.T) {
	dir := buildDemo(t, "init")
	p := filepath.Join(dir, campaign.ProtocolFile)
	proto, _ := os.ReadFile(p)
	extra := `
[[observable]]
name = "cov_spectrum"
edges = ["lo", "hi"]

  [[observable.column]]
  name = "y"
  errors = ["err"]
  covariance = true
  correlation = 0.2
  scale = [0.5, 2.0]
  shift = [-2000.0, 2000.0]
  accept_risk = "six bins: the self-audit refuses about one random key in twenty; this test checks the covariance scaling only"
`
	os.WriteFile(p, append(proto, []byte(extra)...), 0o644)
	if _, err := campaign.Init(dir, signer(t, dir, "custodian")); err != nil {
		t.Fatal(err)
	}
	ta, tb := covTable(0), covTable(15)
	for team, tab := range map[string]*table.Table{"heron": ta, "otter": tb} {
		if _, err := open(t, dir).Seal(team, "cov_spectrum", tab, signer(t, dir, team), ""); err != nil {
			t.Fatal(err)
		}
	}
	res := blindStep(t, dir)
	if fmt.Sprint(res.Opened) != "[cov_spectrum]" {
		t.Fatalf("opened %v", res.Opened)
	}
	c := open(t, dir)
	cmp, err := c.Compare()
	if err != nil {
		t.Fatal(err)
	}
	if len(cmp.Summary.Entries) != 1 || !cmp.Summary.Entries[0].Covariance {
		t.Fatalf("entries %+v", cmp.Summary.Entries)
	}
	blinded := cmp.Summary.Entries[0].Result
	// the same comparison on the true tables, the covariances built here
	n := ta.Len()
	sym := func(tt *table.Table) *mat.SymDense {
		v := mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				v.SetSym(i, j, tt.Column(protocol.CovColumn("y", j))[i])
			}
		}
		return v
	}
	col := c.Protocol.Observable("cov_spectrum").Columns[0]
	opt := col.CompareOptions(c.Protocol.FamilyAlpha())
	opt.CovA, opt.CovB = sym(ta), sym(tb)
	rs, err := compare.Tables(ta, tb, []table.Selection{col.Selection()}, opt.EdgeTol, opt)
	if err != nil {
		t.Fatal(err)
	}
	truth := rs[0]
	if math.Abs(blinded.Chi2-truth.Chi2) > 1e-12*truth.Chi2 || truth.Chi2 == 0 {
		t.Errorf("χ² blinded %v, true %v", blinded.Chi2, truth.Chi2)
	}
	// and the blinded covariance really is scaled: V'_00 differs from V_00
	data, _ := os.ReadFile(one(t, dir, "blinded/heron/cov_spectrum.v1-????????????.csv"))
	if !strings.Contains(string(data), "y.cov.6") || strings.Contains(string(data), ",625,") {
		t.Errorf("blinded table lacks the scaled covariance:\n%s", data)
	}
	if r := campaign.Verify(dir); !r.OK() {
		t.Errorf("verify: %s", reportText(r))
	}
}
