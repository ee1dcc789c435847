package main

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"tandem/blind"
)

// teamTables writes the tables of n teams measuring one invented
// spectrum on bins common bins: each team's value is the truth plus a
// statistical error of its own and a systematic one with correlation
// rhoSyst between teams (z·√ρ + z_t·√(1−ρ) has unit variance), plus
// shift[t] times the team's total uncertainty in every bin. m, when
// given, is applied to every team's values and errors (a blinding map).
func teamTables(t *testing.T, dir string, seed uint64, n, bins int, rhoSyst float64, shift []float64, m *blind.Map) []string {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 99))
	vals := make([][]float64, n)
	stat := make([][]float64, n)
	syst := make([][]float64, n)
	for k := range n {
		vals[k], stat[k], syst[k] = make([]float64, bins), make([]float64, bins), make([]float64, bins)
	}
	for i := range bins {
		truth := 200 + 40*math.Sin(float64(i)/3)
		common := rng.NormFloat64()
		for k := range n {
			stat[k][i] = 2 + 0.5*float64(k) + 0.1*float64(i%5)
			syst[k][i] = 1 + 0.2*float64((i+k)%3)
			v := truth + stat[k][i]*rng.NormFloat64() + syst[k][i]*(common*math.Sqrt(rhoSyst)+rng.NormFloat64()*math.Sqrt(1-rhoSyst))
			if shift != nil {
				v += shift[k] * math.Hypot(stat[k][i], syst[k][i])
			}
			vals[k][i] = v
		}
	}
	var paths []string
	for k := range n {
		v, st, sy := vals[k], stat[k], syst[k]
		if m != nil {
			v, st, sy = m.Values(v), m.Errors(st), m.Errors(sy)
		}
		var b strings.Builder
		b.WriteString("lo,hi,flux,stat,syst\n")
		for i := range bins {
			fmt.Fprintf(&b, "%d,%d,%.17g,%.17g,%.17g\n", i, i+1, v[i], st[i], sy[i])
		}
		p := filepath.Join(dir, fmt.Sprintf("team%c.csv", 'a'+k))
		if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		paths = append(paths, p)
	}
	return paths
}

type teamsDoc struct {
	Verdict     string `json:"verdict"`
	Observables []struct {
		Teams  []string `json:"teams"`
		PValue float64  `json:"p_value"`
		Family int      `json:"family_size"`
	} `json:"observables"`
	Teams []struct {
		Teams     []string `json:"teams"`
		PValue    float64  `json:"p_value"`
		NDF       int      `json:"ndf"`
		Verdict   string   `json:"verdict"`
		Departing string   `json:"departing"`
		Departs   []string `json:"departs"`
		Family    int      `json:"family_size"`
		Criteria  []struct {
			Name     string   `json:"name"`
			Value    float64  `json:"value"`
			Adjusted *float64 `json:"adjusted_p_value"`
			Pass     bool     `json:"pass"`
		} `json:"criteria"`
		LeaveOneOut []struct {
			Team        string  `json:"team"`
			PValue      float64 `json:"p_value"`
			ShiftPValue float64 `json:"shift_p_value"`
		} `json:"leave_one_out"`
	} `json:"teams"`
}

func runTeams(t *testing.T, paths []string, extra ...string) (int, teamsDoc, string) {
	t.Helper()
	args := append([]string{"compare"}, paths...)
	args = append(args, "--error", "stat", "--error", "syst", "--error-correlation", "syst=0.5", "--format", "json")
	args = append(args, extra...)
	code, out, errOut := runCLI(t, args...)
	var d teamsDoc
	if code != 2 {
		if err := json.Unmarshal([]byte(out), &d); err != nil {
			t.Fatalf("exit %d, output is not JSON: %v\n%s\n%s", code, err, out, errOut)
		}
	}
	return code, d, errOut
}

// TestTeamsEndToEnd: agreeing teams pass (exit 0); one team shifted by
// one standard deviation in every bin fails (exit 1) and is the team the
// report names. The family holds the N-team χ² and each team's two
// leave-one-out p-values (1 + 2N), the pairs none (family_size 0).
func TestTeamsEndToEnd(t *testing.T) {
	for _, n := range []int{3, 5} {
		t.Run(fmt.Sprint(n, " teams"), func(t *testing.T) {
			paths := teamTables(t, t.TempDir(), 1, n, 40, 0.5, nil, nil)
			code, d, errOut := runTeams(t, paths)
			if code != 0 || d.Verdict != "pass" {
				t.Fatalf("agreeing teams: exit %d, verdict %q, stderr %s", code, d.Verdict, errOut)
			}
			if len(d.Teams) != 1 || d.Teams[0].Family != 1+2*n || len(d.Teams[0].Criteria) != 1+2*n || d.Teams[0].NDF != (n-1)*40 {
				t.Fatalf("N-team entry: %+v", d.Teams)
			}
			if len(d.Observables) != n*(n-1)/2 {
				t.Fatalf("%d pairwise entries, want %d", len(d.Observables), n*(n-1)/2)
			}
			for _, o := range d.Observables {
				if o.Family != 0 || len(o.Teams) != 2 {
					t.Fatalf("pairwise entry in the family or without teams: %+v", o)
				}
			}

			shift := make([]float64, n)
			shift[n-1] = 1
			paths = teamTables(t, t.TempDir(), 1, n, 40, 0.5, shift, nil)
			code, d, errOut = runTeams(t, paths)
			if code != 1 || d.Verdict != "fail" {
				t.Fatalf("shifted team: exit %d, verdict %q, stderr %s", code, d.Verdict, errOut)
			}
			last := fmt.Sprintf("team%c", 'a'+n-1)
			// with three teams one shifted team also pulls the others'
			// combination, so another team may fail too; the named one
			// comes first
			if tr := d.Teams[0]; tr.Departing != last || len(tr.Departs) == 0 || tr.Departs[0] != last {
				t.Fatalf("departing %q, departs %v; want %s", tr.Departing, tr.Departs, last)
			}
			code, out, _ := runCLI(t, append(append([]string{"compare"}, paths...), "--error", "stat", "--error", "syst", "--error-correlation", "syst=0.5")...)
			if code != 1 || !strings.Contains(out, "departing team: "+last) {
				t.Fatalf("text report: exit %d, no departing line for %s:\n%s", code, last, out)
			}
		})
	}
}

// TestTeamsBlindingInvariance applies one blinding map (blind.Map: a
// positive scale and a shift per bin, derived from a fixed key) to the
// values and errors of all four teams' tables: the verdict, every N-team
// and pairwise p-value, the adjusted p-values and the departing team are
// the same.
func TestTeamsBlindingInvariance(t *testing.T) {
	key, err := blind.KeyFromBytes(make([]byte, 32))
	if err != nil {
		t.Fatal(err)
	}
	const bins = 30
	m := key.Map(blind.MapSpec{Observable: "flux", Column: "flux", Scope: "common",
		Scale: blind.Range{Lo: 0.2, Hi: 5}, Shift: blind.Range{Lo: -500, Hi: 500}}, bins)
	for _, shift := range [][]float64{nil, {0, 0, 0.8, 0}} {
		_, plain, _ := runTeams(t, teamTables(t, t.TempDir(), 5, 4, bins, 0.5, shift, nil))
		_, blinded, _ := runTeams(t, teamTables(t, t.TempDir(), 5, 4, bins, 0.5, shift, &m))
		same := func(what string, a, b float64) {
			t.Helper()
			if math.Abs(a-b) > 1e-9*math.Max(1e-300, math.Abs(a)) {
				t.Errorf("%s: %.17g on true tables, %.17g on blinded ones", what, a, b)
			}
		}
		if plain.Verdict != blinded.Verdict {
			t.Errorf("verdict %s on true tables, %s on blinded ones", plain.Verdict, blinded.Verdict)
		}
		p, b := plain.Teams[0], blinded.Teams[0]
		same("N-team p", p.PValue, b.PValue)
		if p.Departing != b.Departing || !slices.Equal(p.Departs, b.Departs) || p.Verdict != b.Verdict {
			t.Errorf("departing %s %v %s vs %s %v %s", p.Departing, p.Departs, p.Verdict, b.Departing, b.Departs, b.Verdict)
		}
		for k := range p.Criteria {
			same(p.Criteria[k].Name, p.Criteria[k].Value, b.Criteria[k].Value)
			same(p.Criteria[k].Name+" adjusted", *p.Criteria[k].Adjusted, *b.Criteria[k].Adjusted)
		}
		for k := range p.LeaveOneOut {
			same(p.LeaveOneOut[k].Team+" leave-one-out p", p.LeaveOneOut[k].PValue, b.LeaveOneOut[k].PValue)
			same(p.LeaveOneOut[k].Team+" shift p", p.LeaveOneOut[k].ShiftPValue, b.LeaveOneOut[k].ShiftPValue)
		}
		for k := range plain.Observables {
			same(fmt.Sprint("pair ", plain.Observables[k].Teams), plain.Observables[k].PValue, blinded.Observables[k].PValue)
		}
		if shift != nil && (p.Verdict != "fail" || p.Departing != "teamc") {
			t.Errorf("shifted team c: verdict %s, departing %s", p.Verdict, p.Departing)
		}
	}
}
