package report

import (
	"bytes"
	"io"
	"math"
	"strconv"

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
	Accepted    []Acceptance `json:"accepted_disagreements"`
	Teams       []jsonTeams  `json:"teams,omitempty"`
	Observables []jsonEntry  `json:"observables"`
	// Missing lists the comparisons a campaign cannot make yet; present
	// only when there is one (the verdict is then incomplete or pending).
	Missing []jsonMissing `json:"missing,omitempty"`
	// Stale lists the stale sign-offs, "party: why"; present only when
	// there is one.
	Stale []string `json:"stale_signoffs,omitempty"`
	// Stamp is what made the report, when, and from which inputs.
	Stamp *jsonStamp `json:"stamp,omitempty"`
}

// jsonMissing is a [Missing].
type jsonMissing struct {
	Name    string `json:"name"`
	Verdict string `json:"verdict"`
	Reason  string `json:"reason"`
}

// jsonStamp is a [Stamp]: the time is RFC 3339 in UTC.
type jsonStamp struct {
	Tool   string      `json:"tool"`
	Time   string      `json:"time"`
	Inputs []jsonInput `json:"inputs"`
}

type jsonInput struct {
	File   string `json:"file"`
	SHA256 string `json:"sha256"`
}

// jsonLimits are the declared limits, as the criteria hold them: α for
// the adjusted p-values, the raw largest-|pull| tolerance when declared,
// and whether a numerical tolerance applies.
type jsonLimits struct {
	Alpha     jnum  `json:"alpha"`
	MaxPull   *jnum `json:"max_pull,omitempty"`
	Numerical bool  `json:"numerical_tolerance"`
}

// jsonBins are the per-bin inputs and results, one value per bin each.
// Each is a list of numbers in the form of [jnum] (see [numList]).
type jsonBins struct {
	Lo     any `json:"lo"`
	Hi     any `json:"hi"`
	A      any `json:"a"`
	ErrA   any `json:"error_a"`
	B      any `json:"b"`
	ErrB   any `json:"error_b"`
	Diff   any `json:"difference"`
	SigmaD any `json:"sigma_difference"`
}

// jsonCriterion is a [compare.Criterion] with its numbers in the JSON
// contract's form (see [jnum]).
type jsonCriterion struct {
	Name     string `json:"name"`
	Kind     string `json:"kind"`
	Value    jnum   `json:"value"`
	Adjusted *jnum  `json:"adjusted_p_value,omitempty"`
	Limit    jnum   `json:"limit"`
	Op       string `json:"op"`
	Pass     bool   `json:"pass"`
	Detail   string `json:"detail,omitempty"`
	Note     string `json:"note,omitempty"`
	Bins     []int  `json:"bins,omitempty"`
}

// jsonSource is a [compare.Source] with its numbers in the JSON
// contract's form.
type jsonSource struct {
	Name     string `json:"name"`
	Rho      jnum   `json:"rho"`
	PerBin   string `json:"per_bin,omitempty"`
	Declared bool   `json:"declared"`
	Share    jnum   `json:"share"`
}

type jsonEntry struct {
	Name         string          `json:"name"`
	Title        string          `json:"title,omitempty"`
	Column       string          `json:"column"`
	Teams        []string        `json:"teams,omitempty"`
	Labels       []string        `json:"labels"`
	Files        []string        `json:"files,omitempty"`
	Blinded      bool            `json:"blinded"`
	Bins         int             `json:"bins"`
	Chi2         jnum            `json:"chi2"`
	NDF          int             `json:"ndf"`
	PValue       jnum            `json:"p_value"`
	PullMean     jnum            `json:"pull_mean"`
	PullMeanErr  jnum            `json:"pull_mean_error"`
	PullWidth    jnum            `json:"pull_width"`
	PullWidthErr jnum            `json:"pull_width_error"`
	MaxAbsPull   jnum            `json:"max_abs_pull"`
	MaxPullBin   *int            `json:"max_pull_bin"`
	MaxPullP     jnum            `json:"max_pull_p_value"`
	KSStatistic  jnum            `json:"ks_statistic"`
	KSP          jnum            `json:"ks_p_value"`
	Runs         int             `json:"runs"`
	RunsP        jnum            `json:"runs_p_value"`
	Verdict      string          `json:"verdict"`
	Failures     []string        `json:"failures"`
	Criteria     []jsonCriterion `json:"criteria"`
	Limits       jsonLimits      `json:"limits"`
	Family       int             `json:"family_size"`
	Sources      []jsonSource    `json:"sources"`
	Incomparable []int           `json:"incomparable_bins,omitempty"`
	Condition    jnum            `json:"condition_number,omitempty"`
	// AcceptedDisagreement says that this comparison fails and the
	// signing parties accepted the disagreement (see
	// accepted_disagreements).
	AcceptedDisagreement bool       `json:"accepted_disagreement"`
	Warnings             []string   `json:"warnings"`
	ZeroSigmaBins        []int      `json:"zero_sigma_bins,omitempty"`
	Covariance           bool       `json:"covariance"`
	AsymmetricErrs       bool       `json:"asymmetric_errors"`
	Pulls                any        `json:"pulls"`
	Cells                []jsonCell `json:"cells,omitempty"` // 2-D comparisons only (map.go)
	PerBin               jsonBins   `json:"per_bin"`
}

// JSONValue builds the JSON document of s as a value, for callers that
// embed or hash it.
func JSONValue(s *Summary, st Style) any { return jsonValue(s, st.Stamp) }

func jsonValue(s *Summary, stamp *Stamp) jsonSummary {
	out := jsonSummary{Verdict: s.Verdict(), Title: s.Title, Campaign: s.Campaign, Notes: s.Notes,
		Accepted: s.Accepted, Observables: []jsonEntry{}, Stale: s.Stale}
	for _, m := range s.Missing {
		out.Missing = append(out.Missing, jsonMissing{Name: m.Observable, Verdict: m.Verdict, Reason: m.Reason})
	}
	if stamp != nil {
		out.Stamp = &jsonStamp{Tool: stamp.Tool, Time: stampTime(stamp.Time), Inputs: []jsonInput{}}
		for _, in := range stamp.Inputs {
			out.Stamp.Inputs = append(out.Stamp.Inputs, jsonInput{File: in.Name, SHA256: in.SHA256})
		}
	}
	if out.Accepted == nil {
		out.Accepted = []Acceptance{}
	}
	out.Teams = jsonTeamsValue(s) // the N-team tests (three or more teams), before the pairs
	for _, e := range s.Entries {
		a, b := e.Sides()
		je := jsonEntry{
			Name: e.Observable, Title: e.Title, Column: e.Column, Labels: []string{a, b},
			Blinded: e.Blinded, Bins: e.Bins, AcceptedDisagreement: !e.Pass && len(s.Accepted) > 0,
			Chi2: jnum(e.Chi2), NDF: e.NDF, PValue: jnum(e.PValue),
			PullMean: jnum(e.PullMean), PullMeanErr: jnum(e.PullMeanErr), PullWidth: jnum(e.PullWidth), PullWidthErr: jnum(e.PullWidthEr),
			MaxAbsPull: jnum(e.MaxAbsPull), MaxPullP: jnum(e.MaxPullP),
			KSStatistic: jnum(e.KSStat), KSP: jnum(e.KSP), Runs: e.Runs, RunsP: jnum(e.RunsP),
			Verdict: e.Verdict(), Failures: e.Failures(), Warnings: e.Warnings,
			Covariance: e.Covariance, AsymmetricErrs: e.Asymmetric, Pulls: numList(e.Pulls), Cells: jsonCells(e.Result),
			PerBin: jsonBins{Lo: numList(e.Lo), Hi: numList(e.Hi), A: numList(e.A), ErrA: numList(e.ErrA), B: numList(e.B),
				ErrB: numList(e.ErrB), Diff: numList(e.Diff), SigmaD: numList(e.SigmaDiff)},
			Family: e.Family, Condition: jnum(e.Condition),
			Criteria: []jsonCriterion{}, Sources: []jsonSource{},
		}
		if e.MaxPullBin >= 0 {
			bin := e.MaxPullBin + 1
			je.MaxPullBin = &bin
		}
		if e.Files[0] != "" || e.Files[1] != "" {
			je.Files = []string{e.Files[0], e.Files[1]}
		}
		je.Limits.Alpha = jnum(e.Alpha)
		for _, so := range e.Sources {
			je.Sources = append(je.Sources, jsonSource{Name: so.Name, Rho: jnum(so.Rho), PerBin: so.PerBin, Declared: so.Declared, Share: jnum(so.Share)})
		}
		for _, z := range e.Incomparable {
			je.Incomparable = append(je.Incomparable, z+1)
		}
		for _, c := range e.Criteria {
			jc := jsonCriterion{Name: c.Name, Kind: c.Kind, Value: jnum(c.Value), Limit: jnum(c.Limit), Op: c.Op,
				Pass: c.Pass, Detail: c.Detail, Note: c.Note, Bins: c.Bins}
			if c.Adjusted != nil {
				v := jnum(*c.Adjusted)
				jc.Adjusted = &v
			}
			je.Criteria = append(je.Criteria, jc)
			switch c.Name {
			case compare.CritMaxPull:
				l := jnum(c.Limit)
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
		out.Observables = append(out.Observables, je)
	}
	return out
}

// jnum is a number of the JSON contract. JSON has no infinities and no
// NaN, so an infinite value (the pull of a bin with d ≠ 0 and σ_d = 0) is
// the string "+Inf" or "-Inf", which Python's float() and JavaScript's
// Number() both read back as an infinity, and an undefined one (NaN: a
// pull width of one pull, the p-values when no bin carries a pull, the
// pull of a bin with d = 0 and σ_d = 0) is null. Finite values are written
// as encoding/json writes a float64.
type jnum float64

func (v jnum) MarshalJSON() ([]byte, error) { return appendJSONNumber(nil, float64(v)), nil }

// jnums is a list of numbers of the JSON contract (see [jnum]); nil is
// the empty list.
type jnums []float64

func (xs jnums) MarshalJSON() ([]byte, error) {
	b := make([]byte, 0, 2+len(xs)*12)
	b = append(b, '[')
	for i, x := range xs {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendJSONNumber(b, x)
	}
	return append(b, ']'), nil
}

// numList is xs as a JSON list in the form of [jnum]: the []float64
// itself when every value is finite (encoding/json writes it fastest), else
// a [jnums]; nil is the empty list.
func numList(xs []float64) any {
	if xs == nil {
		return []float64{}
	}
	for _, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return jnums(xs)
		}
	}
	return xs
}

// appendJSONNumber appends v in the form of [jnum]. Finite values are in
// the shortest form that reads back exactly, in exponent notation below
// 1e-6 and from 1e21 on (with no leading zero in a negative exponent), as
// encoding/json writes them.
func appendJSONNumber(b []byte, v float64) []byte {
	switch {
	case math.IsNaN(v):
		return append(b, "null"...)
	case math.IsInf(v, 1):
		return append(b, `"+Inf"`...)
	case math.IsInf(v, -1):
		return append(b, `"-Inf"`...)
	}
	if b2, ok := appendShortDecimal(b, v); ok {
		return b2
	}
	if a := math.Abs(v); a != 0 && (a < 1e-6 || a >= 1e21) {
		start := len(b)
		b = strconv.AppendFloat(b, v, 'e', -1, 64)
		// "1e-07" → "1e-7"
		if e := bytes.LastIndexByte(b[start:], 'e'); e >= 0 {
			e += start
			if len(b) == e+4 && b[e+1] == '-' && b[e+2] == '0' {
				b[e+2] = b[e+3]
				b = b[:e+3]
			}
		}
		return b
	}
	return strconv.AppendFloat(b, v, 'f', -1, 64)
}

// appendShortDecimal appends v when it is an integer below 2⁵³ or has at
// most four decimals and is below 10⁹, in the form strconv's shortest 'f'
// writes it, and says whether it did. For such an integer every digit is
// needed (the neighbouring values are at most 1 apart), so the shortest
// form is the integer itself. Otherwise, the fewest decimals p for which
// n = round(v·10ᵖ) gives n/10ᵖ == v (both exact, the division correctly
// rounded, so the decimal n·10⁻ᵖ reads back as v) is the shortest form:
// below 10⁹ two such n at one p would lie less than an ulp (< 2⁻²³) apart.
func appendShortDecimal(b []byte, v float64) ([]byte, bool) {
	a := math.Abs(v)
	if !(a < 1<<53) || (v == 0 && math.Signbit(v)) {
		return b, false
	}
	if v == math.Trunc(v) {
		return strconv.AppendInt(b, int64(v), 10), true
	}
	if !(a < 1e9) {
		return b, false
	}
	for p := 1; p <= 4; p++ {
		n := math.Round(a * pow10[p])
		if n/pow10[p] == a {
			return appendFixed(b, v, p), true
		}
	}
	return b, false
}

// JSON writes s as one indented JSON object followed by a newline.
func JSON(w io.Writer, s *Summary, st Style) error {
	size := 4096
	for _, e := range s.Entries {
		if e.Result != nil {
			size += 3072 + 256*e.Bins // nine numbers of up to 28 bytes a bin
		}
	}
	p := newPage(w, size)
	j := jsonWriter{b: p.b, p: p}
	j.summary(jsonValue(s, st.Stamp))
	p.b = append(j.b, '\n')
	return p.flush()
}
