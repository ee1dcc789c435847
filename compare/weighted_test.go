package compare

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"strings"
	"testing"

	"tandem/compare/table"
)

// TestWeightedPearson: with unit weights (s² = n) and equal totals the
// χ² for weighted histograms is Pearson's χ² of the 2×m table; the values
// are scipy.stats.chi2_contingency's (testdata/reference/counts_reference.json,
// written by counts_make_reference.py with Debian's python3-scipy).
func TestWeightedPearson(t *testing.T) {
	data, err := os.ReadFile("../testdata/reference/counts_reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		SciPy    string `json:"scipy"`
		Weighted []struct {
			A, B    []float64
			Chi2, P float64
			Dof     int
		} `json:"weighted"`
	}
	if err := json.Unmarshal(data, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Weighted) == 0 {
		t.Fatal("no weighted reference values")
	}
	for _, c := range ref.Weighted {
		ws, err := WeightedTest(c.A, c.A, c.B, c.B, 0)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(ws.Chi2-c.Chi2) > 1e-12*c.Chi2 || ws.NDF != c.Dof || math.Abs(ws.P-c.P) > 1e-10*math.Max(c.P, 1e-300) {
			t.Errorf("%v vs %v: X² = %.12g, ndf %d, p %.12g; scipy %s chi2_contingency: %.12g, %d, %.12g",
				c.A, c.B, ws.Chi2, ws.NDF, ws.P, ref.SciPy, c.Chi2, c.Dof, c.P)
		}
	}
}

// TestWeightedScaleFree: X² does not change when one histogram's weights
// are all scaled by c (w → c·w, s² → c²·s²), a property of Gagunashvili's
// statistic; the normalisation test then sees the scale.
func TestWeightedScaleFree(t *testing.T) {
	wa, sa := []float64{12.5, 30.25, 7, 0}, []float64{9.1, 25.3, 6.2, 0}
	wb, sb := []float64{10, 33, 9.5, 1.5}, []float64{8.8, 30.1, 9, 1.1}
	x, err := WeightedTest(wa, sa, wb, sb, 0)
	if err != nil {
		t.Fatal(err)
	}
	c := 3.7
	wc, sc := make([]float64, len(wa)), make([]float64, len(wa))
	for i := range wa {
		wc[i], sc[i] = c*wa[i], c*c*sa[i]
	}
	y, err := WeightedTest(wc, sc, wb, sb, 0)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(x.Chi2-y.Chi2) > 1e-12*x.Chi2 || x.NDF != 3 || y.NormP > 1e-6 {
		t.Errorf("scaled by %v: X² %v → %v (ndf %d), normalisation p %v", c, x.Chi2, y.Chi2, x.NDF, y.NormP)
	}
}

func TestWeightedColumns(t *testing.T) {
	mk := func(name string, w, s []float64) *table.Table {
		tb := countTable(name, w, nil)
		tb.Names = append(tb.Names, "w2")
		tb.Cols = append(tb.Cols, s)
		return tb
	}
	opt := countsOpt()
	opt.SumW2 = "w2"
	a := mk("a.csv", []float64{20.5, 40.2, 10.1, 0}, []float64{22, 41, 11, 0})
	b := mk("b.csv", []float64{19, 43.1, 9.5, 0}, []float64{20, 45, 10, 0})
	rs, err := Columns(a, b, []Selection{{Value: "n"}}, opt)
	if err != nil {
		t.Fatal(err)
	}
	r := rs[0]
	if !r.Pass || r.Counts.Weighted == nil || r.Counts.Informative != 3 || r.Counts.BinTests[3] != TestNone || r.Counts.BinTests[0] != TestWeighted {
		t.Errorf("weighted comparison: pass %v, %+v", r.Pass, r.Counts)
	}
	names := []string{}
	for _, c := range r.Criteria {
		names = append(names, c.Name)
	}
	if got := strings.Join(names, "|"); got != CritCountBins+"|"+CritWeightedChi2+"|"+CritWeightedNorm {
		t.Errorf("criteria %s", got)
	}
	bad := mk("bad.csv", []float64{20.5, 40.2, 10.1, 3}, []float64{22, 41, 11, 0})
	_, err = Columns(bad, b, []Selection{{Value: "n"}}, opt)
	var te *table.Error
	if !errors.As(err, &te) || te.Line != 5 || !strings.Contains(err.Error(), "zero sum of squared weights") {
		t.Errorf("weight without squared weights: %v", err)
	}
	o := Defaults()
	o.SumW2 = "w2"
	if o.Validate() == nil {
		t.Error("sumw2 without counts accepted")
	}
}
