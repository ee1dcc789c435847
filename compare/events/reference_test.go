package events

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"tandem/compare/stats"
)

// The reference values come from testdata/reference/events_make_reference.py
// (pandas merge, scipy.stats.binomtest and scipy.stats.beta.ppf, versions in
// events_reference.json), computed from the same two tables.
type reference struct {
	Versions map[string]string `json:"versions"`
	CL       float64           `json:"cl"`
	RawMatch map[string]int64  `json:"matched"`
	Vars     []struct {
		Name     string  `json:"name"`
		Abs      float64 `json:"abs"`
		Rel      float64 `json:"rel"`
		Compared int64   `json:"compared"`
		Outside  int64   `json:"outside_tolerance"`
		MaxAbs   float64 `json:"max_abs_diff"`
		MaxRel   float64 `json:"max_rel_diff"`
	} `json:"variables"`
	Cutflow []struct {
		Cut    string     `json:"cut"`
		A      int64      `json:"a"`
		B      int64      `json:"b"`
		Both   int64      `json:"both"`
		OnlyA  int64      `json:"only_a"`
		OnlyB  int64      `json:"only_b"`
		PValue float64    `json:"p_value"`
		CPA    [2]float64 `json:"cp_a"`
		CPB    [2]float64 `json:"cp_b"`
	} `json:"cutflow"`
	Binning struct {
		Var   string    `json:"var"`
		Edges []float64 `json:"edges"`
		Bins  []struct {
			NA      int64   `json:"n_a"`
			NB      int64   `json:"n_b"`
			NCommon int64   `json:"n_common"`
			Rho     float64 `json:"rho"`
		} `json:"bins"`
	} `json:"binning"`
	McNemar []struct {
		N1     int64   `json:"n1"`
		N2     int64   `json:"n2"`
		PValue float64 `json:"p_value"`
	} `json:"mcnemar"`
}

func loadReference(t *testing.T) *reference {
	t.Helper()
	data, err := os.ReadFile("../../testdata/reference/events_reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref reference
	if err := json.Unmarshal(data, &ref); err != nil {
		t.Fatal(err)
	}
	t.Logf("reference versions: %v", ref.Versions)
	return &ref
}

func near(a, b, tol float64) bool {
	return a == b || math.Abs(a-b) <= tol*math.Max(math.Abs(a), math.Abs(b))
}

func referenceOptions(ref *reference) Options {
	o := Options{Layout: Layout{Keys: []string{"run", "event"}, Vars: []string{"energy", "angle", "hits"},
		Cuts: []string{"trigger", "quality", "fiducial"}}, Tols: map[string]Tolerance{}, CL: ref.CL,
		Binning: &Binning{Var: ref.Binning.Var, Edges: ref.Binning.Edges}}
	for _, v := range ref.Vars {
		o.Tols[v.Name] = Tolerance{Abs: v.Abs, Rel: v.Rel}
	}
	return o
}

func checkAgainstReference(t *testing.T, ref *reference, s *Summary) {
	t.Helper()
	r := Evaluate(s)
	if s.Common != ref.RawMatch["common"] || s.OnlyA != ref.RawMatch["only_a"] || s.OnlyB != ref.RawMatch["only_b"] {
		t.Errorf("matched %d/%d/%d, pandas %v", s.Common, s.OnlyA, s.OnlyB, ref.RawMatch)
	}
	for j, v := range ref.Vars {
		got := r.Variables[j]
		if got.Name != v.Name || got.Compared != v.Compared || got.Outside != v.Outside {
			t.Errorf("%s: compared %d outside %d, pandas %d %d", v.Name, got.Compared, got.Outside, v.Compared, v.Outside)
		}
		if !near(got.MaxAbs.Value, v.MaxAbs, 1e-15) || !near(got.MaxRel.Value, v.MaxRel, 1e-15) {
			t.Errorf("%s: max abs %v rel %v, pandas %v %v", v.Name, got.MaxAbs.Value, got.MaxRel.Value, v.MaxAbs, v.MaxRel)
		}
	}
	for k, c := range ref.Cutflow {
		st := r.Steps[k]
		if st.Cut != c.Cut || st.A != c.A || st.B != c.B || st.Both != c.Both || st.OnlyA != c.OnlyA || st.OnlyB != c.OnlyB {
			t.Errorf("step %s: %+v, pandas %+v", c.Cut, st, c)
		}
		if !near(st.PValue, c.PValue, 1e-9) {
			t.Errorf("step %s: McNemar p %v, scipy binomtest %v", c.Cut, st.PValue, c.PValue)
		}
		if !near(st.EffA.Lo, c.CPA[0], 1e-9) || !near(st.EffA.Hi, c.CPA[1], 1e-9) ||
			!near(st.EffB.Lo, c.CPB[0], 1e-9) || !near(st.EffB.Hi, c.CPB[1], 1e-9) {
			t.Errorf("step %s: Clopper-Pearson A [%v %v] B [%v %v], scipy beta.ppf %v %v", c.Cut,
				st.EffA.Lo, st.EffA.Hi, st.EffB.Lo, st.EffB.Hi, c.CPA, c.CPB)
		}
	}
	for i, b := range ref.Binning.Bins {
		got := s.Bins[i]
		if got.NA != b.NA || got.NB != b.NB || got.NCommon != b.NCommon || !near(r.Rho[i], b.Rho, 1e-15) {
			t.Errorf("bin %d: %+v rho %v, pandas %+v", i, got, r.Rho[i], b)
		}
	}
}

func TestAgainstPandasAndScipy(t *testing.T) {
	ref := loadReference(t)
	dir := "../../testdata/reference"
	for _, budget := range []int64{0, 4096} { // in memory, and spilled to disk
		a, err := OpenCSV(filepath.Join(dir, "events_a.csv"))
		if err != nil {
			t.Fatal(err)
		}
		b, err := OpenCSV(filepath.Join(dir, "events_b.csv"))
		if err != nil {
			t.Fatal(err)
		}
		o := referenceOptions(ref)
		o.MemBudget = budget
		o.TempDir = t.TempDir()
		var list bytes.Buffer
		o.Unmatched = &list
		s, err := Sync(a, b, o)
		if err != nil {
			t.Fatal(err)
		}
		if !s.Spilled {
			t.Error("B is shuffled, yet the sorted path was taken")
		}
		checkAgainstReference(t, ref, s)
		lines := strings.Split(strings.TrimSpace(list.String()), "\n")
		if int64(len(lines)-1) != s.OnlyA+s.OnlyB || lines[0] != "side,run,event,position" {
			t.Errorf("unmatched list has %d lines, want header + %d", len(lines), s.OnlyA+s.OnlyB)
		}
		if ents, _ := os.ReadDir(o.TempDir); len(ents) != 0 {
			t.Errorf("temporary files left behind: %v", ents)
		}
	}
}

func TestMcNemarAgainstScipy(t *testing.T) {
	ref := loadReference(t)
	for _, c := range ref.McNemar {
		if got := stats.McNemar(c.N1, c.N2); !near(got, c.PValue, 1e-10) {
			t.Errorf("McNemar(%d, %d) = %v, scipy binomtest %v", c.N1, c.N2, got, c.PValue)
		}
	}
}
