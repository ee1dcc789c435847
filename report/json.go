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
	Verdict     string      `json:"verdict"`
	Title       string      `json:"title,omitempty"`
	Notes       []string    `json:"notes,omitempty"`
	Observables []jsonEntry `json:"observables"`
}

type jsonEntry struct {
	Name           string              `json:"name"`
	Column         string              `json:"column"`
	Teams          []string            `json:"teams,omitempty"`
	Blinded        bool                `json:"blinded"`
	Bins           int                 `json:"bins"`
	Chi2           float64             `json:"chi2"`
	NDF            int                 `json:"ndf"`
	PValue         float64             `json:"p_value"`
	PullMean       float64             `json:"pull_mean"`
	PullMeanErr    float64             `json:"pull_mean_error"`
	PullWidth      float64             `json:"pull_width"`
	PullWidthErr   float64             `json:"pull_width_error"`
	MaxAbsPull     float64             `json:"max_abs_pull"`
	MaxPullBin     int                 `json:"max_pull_bin"`
	MaxPullP       float64             `json:"max_pull_p_value"`
	KSStatistic    float64             `json:"ks_statistic"`
	KSP            float64             `json:"ks_p_value"`
	Runs           int                 `json:"runs"`
	RunsP          float64             `json:"runs_p_value"`
	Verdict        string              `json:"verdict"`
	Failures       []string            `json:"failures"`
	Criteria       []compare.Criterion `json:"criteria"`
	Warnings       []string            `json:"warnings"`
	ZeroSigmaBins  []int               `json:"zero_sigma_bins,omitempty"`
	Covariance     bool                `json:"covariance"`
	AsymmetricErrs bool                `json:"asymmetric_errors"`
	Pulls          []float64           `json:"pulls"`
}

// JSONValue builds the JSON document of s as a value, for callers that
// embed or hash it.
func JSONValue(s *compare.Summary) any {
	out := jsonSummary{Verdict: s.Verdict(), Title: s.Title, Notes: s.Notes, Observables: []jsonEntry{}}
	for _, e := range s.Entries {
		je := jsonEntry{
			Name: e.Observable, Column: e.Column, Blinded: e.Blinded, Bins: e.Bins,
			Chi2: e.Chi2, NDF: e.NDF, PValue: e.PValue,
			PullMean: e.PullMean, PullMeanErr: e.PullMeanErr, PullWidth: e.PullWidth, PullWidthErr: e.PullWidthEr,
			MaxAbsPull: e.MaxAbsPull, MaxPullBin: e.MaxPullBin + 1, MaxPullP: e.MaxPullP,
			KSStatistic: e.KSStat, KSP: e.KSP, Runs: e.Runs, RunsP: e.RunsP,
			Verdict: e.Verdict(), Failures: e.Failures(), Criteria: slices.Clone(e.Criteria), Warnings: e.Warnings,
			Covariance: e.Covariance, AsymmetricErrs: e.Asymmetric, Pulls: e.Pulls,
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
		}
		for _, f := range []*float64{&je.Chi2, &je.PValue, &je.PullMean, &je.PullMeanErr, &je.PullWidth,
			&je.PullWidthErr, &je.MaxAbsPull, &je.MaxPullP, &je.KSStatistic, &je.KSP, &je.RunsP} {
			*f = jsonNumber(*f)
		}
		if slices.ContainsFunc(je.Pulls, func(p float64) bool { return math.IsInf(p, 0) || math.IsNaN(p) }) {
			je.Pulls = slices.Clone(je.Pulls)
			for i := range je.Pulls {
				je.Pulls[i] = jsonNumber(je.Pulls[i])
			}
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

// JSON writes s as one indented JSON object followed by a newline.
func JSON(w io.Writer, s *compare.Summary) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(JSONValue(s))
}
