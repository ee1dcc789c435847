package report

import (
	"encoding/json"
	"io"
	"math"
	"slices"

	"tandem/compare"
)

// jsonSummary is the JSON contract of the brief; the field names are
// relied on by scripts and must not change.
type jsonSummary struct {
	Verdict  string   `json:"verdict"`
	Title    string   `json:"title,omitempty"`
	Campaign string   `json:"campaign,omitempty"`
	Notes    []string `json:"notes,omitempty"`
	// Accepted lists the disagreements the signing parties accepted,
	// always present (empty when there is none).
	Accepted    []compare.Acceptance `json:"accepted_disagreements"`
	Observables []jsonEntry          `json:"observables"`
}

// jsonLimits are the declared limits, as the criteria hold them: α for
// the adjusted p-values, the raw largest-|pull| tolerance when declared,
// and whether a numerical tolerance applies.
type jsonLimits struct {
	Alpha     float64  `json:"alpha"`
	MaxPull   *float64 `json:"max_pull,omitempty"`
	Numerical bool     `json:"numerical_tolerance"`
}

// jsonBins are the per-bin inputs and results, one value per bin each.
type jsonBins struct {
	Lo     []float64 `json:"lo"`
	Hi     []float64 `json:"hi"`
	A      []float64 `json:"a"`
	ErrA   []float64 `json:"error_a"`
	B      []float64 `json:"b"`
	ErrB   []float64 `json:"error_b"`
	Diff   []float64 `json:"difference"`
	SigmaD []float64 `json:"sigma_difference"`
}

type jsonEntry struct {
	Name         string              `json:"name"`
	Title        string              `json:"title,omitempty"`
	Column       string              `json:"column"`
	Teams        []string            `json:"teams,omitempty"`
	Labels       []string            `json:"labels"`
	Files        []string            `json:"files,omitempty"`
	Blinded      bool                `json:"blinded"`
	Bins         int                 `json:"bins"`
	Chi2         float64             `json:"chi2"`
	NDF          int                 `json:"ndf"`
	PValue       float64             `json:"p_value"`
	PullMean     float64             `json:"pull_mean"`
	PullMeanErr  float64             `json:"pull_mean_error"`
	PullWidth    float64             `json:"pull_width"`
	PullWidthErr float64             `json:"pull_width_error"`
	MaxAbsPull   float64             `json:"max_abs_pull"`
	MaxPullBin   int                 `json:"max_pull_bin"`
	MaxPullP     float64             `json:"max_pull_p_value"`
	KSStatistic  float64             `json:"ks_statistic"`
	KSP          float64             `json:"ks_p_value"`
	Runs         int                 `json:"runs"`
	RunsP        float64             `json:"runs_p_value"`
	Verdict      string              `json:"verdict"`
	Failures     []string            `json:"failures"`
	Criteria     []compare.Criterion `json:"criteria"`
	Limits       jsonLimits          `json:"limits"`
	Family       int                 `json:"family_size"`
	Sources      []compare.Source    `json:"sources"`
	Incomparable []int               `json:"incomparable_bins,omitempty"`
	Condition    float64             `json:"condition_number,omitempty"`
	// AcceptedDisagreement says that this comparison fails and the
	// signing parties accepted the disagreement (see
	// accepted_disagreements).
	AcceptedDisagreement bool      `json:"accepted_disagreement"`
	Warnings             []string  `json:"warnings"`
	ZeroSigmaBins        []int     `json:"zero_sigma_bins,omitempty"`
	Covariance           bool      `json:"covariance"`
	AsymmetricErrs       bool      `json:"asymmetric_errors"`
	Pulls                []float64 `json:"pulls"`
	PerBin               jsonBins  `json:"per_bin"`
}

// JSONValue builds the JSON document of s as a value, for callers that
// embed or hash it.
func JSONValue(s *compare.Summary) any {
	out := jsonSummary{Verdict: s.Verdict(), Title: s.Title, Campaign: s.Campaign, Notes: s.Notes,
		Accepted: s.Accepted, Observables: []jsonEntry{}}
	if out.Accepted == nil {
		out.Accepted = []compare.Acceptance{}
	}
	for _, e := range s.Entries {
		a, b := e.Sides()
		je := jsonEntry{
			Name: e.Observable, Title: e.Title, Column: e.Column, Labels: []string{a, b},
			Blinded: e.Blinded, Bins: e.Bins, AcceptedDisagreement: !e.Pass && len(s.Accepted) > 0,
			Chi2: e.Chi2, NDF: e.NDF, PValue: e.PValue,
			PullMean: e.PullMean, PullMeanErr: e.PullMeanErr, PullWidth: e.PullWidth, PullWidthErr: e.PullWidthEr,
			MaxAbsPull: e.MaxAbsPull, MaxPullBin: e.MaxPullBin + 1, MaxPullP: e.MaxPullP,
			KSStatistic: e.KSStat, KSP: e.KSP, Runs: e.Runs, RunsP: e.RunsP,
			Verdict: e.Verdict(), Failures: e.Failures(), Criteria: slices.Clone(e.Criteria), Warnings: e.Warnings,
			Covariance: e.Covariance, AsymmetricErrs: e.Asymmetric, Pulls: e.Pulls,
			PerBin: jsonBins{Lo: e.Lo, Hi: e.Hi, A: e.A, ErrA: e.ErrA, B: e.B, ErrB: e.ErrB, Diff: e.Diff, SigmaD: e.SigmaDiff},
		}
		if e.Files[0] != "" || e.Files[1] != "" {
			je.Files = []string{e.Files[0], e.Files[1]}
		}
		je.Limits.Alpha, je.Family, je.Condition = e.Alpha, e.Family, jsonNumber(e.Condition)
		je.Sources = slices.Clone(e.Sources)
		if je.Sources == nil {
			je.Sources = []compare.Source{}
		}
		for i := range je.Sources {
			je.Sources[i].Rho, je.Sources[i].Share = jsonNumber(je.Sources[i].Rho), jsonNumber(je.Sources[i].Share)
		}
		for _, z := range e.Incomparable {
			je.Incomparable = append(je.Incomparable, z+1)
		}
		for _, c := range e.Criteria {
			l := c.Limit
			switch c.Name {
			case compare.CritMaxPull:
				je.Limits.MaxPull = &l
			case compare.CritNumerical:
				je.Limits.Numerical = true
			}
		}
		if je.Warnings == nil {
			je.Warnings = []string{}
		}
		for _, z := range e.ZeroSigma {
			je.ZeroSigmaBins = append(je.ZeroSigmaBins, z+1)
		}
		if e.Teams[0] != "" {
			je.Teams = []string{e.Teams[0], e.Teams[1]}
		}
		for i := range je.Criteria {
			je.Criteria[i].Value = jsonNumber(je.Criteria[i].Value)
			if a := je.Criteria[i].Adjusted; a != nil {
				v := jsonNumber(*a)
				je.Criteria[i].Adjusted = &v
			}
		}
		for _, f := range []*float64{&je.Chi2, &je.PValue, &je.PullMean, &je.PullMeanErr, &je.PullWidth,
			&je.PullWidthErr, &je.MaxAbsPull, &je.MaxPullP, &je.KSStatistic, &je.KSP, &je.RunsP} {
			*f = jsonNumber(*f)
		}
		for _, xs := range []*[]float64{&je.Pulls, &je.PerBin.Lo, &je.PerBin.Hi, &je.PerBin.A, &je.PerBin.ErrA,
			&je.PerBin.B, &je.PerBin.ErrB, &je.PerBin.Diff, &je.PerBin.SigmaD} {
			*xs = jsonNumbers(*xs)
		}
		out.Observables = append(out.Observables, je)
	}
	return out
}

// jsonNumber keeps a value representable in JSON: an overflow to ±Inf
// (a pull of a huge difference over a tiny uncertainty) becomes
// ±MaxFloat64, and NaN becomes 0.
func jsonNumber(v float64) float64 {
	switch {
	case math.IsNaN(v):
		return 0
	case math.IsInf(v, 1):
		return math.MaxFloat64
	case math.IsInf(v, -1):
		return -math.MaxFloat64
	}
	return v
}

// jsonNumbers returns xs with every value representable in JSON (a copy
// only when some is not); a nil slice becomes empty.
func jsonNumbers(xs []float64) []float64 {
	if xs == nil {
		return []float64{}
	}
	if !slices.ContainsFunc(xs, func(p float64) bool { return math.IsInf(p, 0) || math.IsNaN(p) }) {
		return xs
	}
	out := slices.Clone(xs)
	for i := range out {
		out[i] = jsonNumber(out[i])
	}
	return out
}

// JSON writes s as one indented JSON object followed by a newline.
func JSON(w io.Writer, s *compare.Summary) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(JSONValue(s))
}
