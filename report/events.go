package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"

	"tandem/compare/events"
)

// SyncFormats lists the output formats of an event-level synchronisation.
var SyncFormats = []string{"text", "json", "markdown", "junit", "html"}

// RenderSync writes an event-level synchronisation in the named format.
// Free text is shown escaped (see [EscapeText]).
func RenderSync(w io.Writer, format string, r *events.Result, st Style) error {
	switch format {
	case "text", "":
		return SyncText(w, r, st)
	case "json":
		return SyncJSON(w, r)
	case "markdown":
		return SyncMarkdown(w, r)
	case "junit":
		return SyncJUnit(w, r)
	case "html":
		return SyncHTML(w, r)
	}
	return fmt.Errorf("unknown format %q (want %s)", format, strings.Join(SyncFormats, ", "))
}

func syncVerdict(r *events.Result) string {
	if r.Pass {
		return "pass"
	}
	return "fail"
}

// keyStr writes a key with its column names.
func keyStr(r *events.Result, k []int64) string {
	if len(k) == 0 {
		return "-"
	}
	return events.KeyText(r.Keys, k)
}

// effStr writes an efficiency with its interval, in per cent.
func effStr(e events.Efficiency) string {
	if e.N == 0 {
		return "n/a"
	}
	return fmt.Sprintf("%.2f%% [%.2f, %.2f]", 100*e.Value, 100*e.Lo, 100*e.Hi)
}

func tolStr(t events.Tolerance) string {
	return fmt.Sprintf("abs %s, rel %s", num(t.Abs), num(t.Rel))
}

// SyncText writes a terminal report: verdict and failures, the matching,
// each variable's agreement, the cut flow and the failing events.
func SyncText(w io.Writer, r *events.Result, st Style) error {
	r = cleanResult(r)
	ew := &errWriter{w: w}
	fmt.Fprintf(ew, "verdict: %s\n", verdictWord(st, r.Pass))
	fmt.Fprintf(ew, "%s vs %s, key %s", r.LabelA, r.LabelB, strings.Join(r.Keys, ","))
	if r.Parts > 1 {
		fmt.Fprintf(ew, ", %d partitions merged", r.Parts)
	}
	fmt.Fprintln(ew)
	for _, f := range r.Failures {
		fmt.Fprintf(ew, "  %s %s\n", paint(st, ansiRed, "FAIL"), f)
	}
	fmt.Fprintf(ew, "\nevents: %d common, %d only in %s, %d only in %s (McNemar p = %s, for information)\n",
		r.Common, r.OnlyA, r.LabelA, r.OnlyB, r.LabelB, pval(r.PValue))
	fmt.Fprintf(ew, "  %s\n", inputOrder(r))
	sample := func(label string, keys [][]int64, n int64) {
		if n == 0 {
			return
		}
		keys = keys[:min(len(keys), 8)]
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = "(" + keyStr(r, k) + ")"
		}
		more := ""
		if int64(len(keys)) < n {
			more = fmt.Sprintf(" … and %d more", n-int64(len(keys)))
		}
		fmt.Fprintf(ew, "  only in %s: %s%s\n", label, strings.Join(parts, " "), more)
	}
	sample(r.LabelA, r.SampleA, r.OnlyA)
	sample(r.LabelB, r.SampleB, r.OnlyB)

	if len(r.Variables) > 0 {
		fmt.Fprintln(ew, "\nvariables (common events):")
		tw := tabwriter.NewWriter(ew, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "  \tname\toutside\tfraction\tmax |a-b|\tat\tmax rel\tat\tr50\tr99\ttolerance")
		for _, v := range r.Variables {
			mark := "ok"
			if !v.Pass {
				mark = paint(st, ansiRed, "FAIL")
			}
			name := v.Name
			if v.Blinded {
				name += " (blinded)"
			}
			fmt.Fprintf(tw, "  %s\t%s\t%d/%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", mark, name, v.Outside, v.Compared,
				num(v.Fraction), num(v.MaxAbs.Value), keyStr(r, v.MaxAbs.Key), num(v.MaxRel.Value), keyStr(r, v.MaxRel.Key),
				num(v.Quantiles[0]), num(v.Quantiles[2]), tolStr(v.Tol))
		}
		tw.Flush()
	}
	if len(r.Steps) > 0 {
		fmt.Fprintf(ew, "\ncut flow (cumulative; efficiency of the step with %g%% Clopper-Pearson interval; McNemar on common events, Holm over steps, alpha %g):\n", 100*r.CL, r.Alpha)
		tw := tabwriter.NewWriter(ew, 0, 0, 2, ' ', 0)
		fmt.Fprintf(tw, "  \tcut\t%s\t%s\tboth\tonly %s\tonly %s\tp\tadjusted\teff %s\teff %s\n", r.LabelA, r.LabelB, r.LabelA, r.LabelB, r.LabelA, r.LabelB)
		for k, s := range r.Steps {
			mark := ""
			switch {
			case k == r.FirstSplit:
				mark = paint(st, ansiRed+ansiBold, ">>")
			case r.FirstSplit < 0 && k == r.FirstDiscordant:
				mark = ">"
			}
			fmt.Fprintf(tw, "  %s\t%s\t%d\t%d\t%d\t%d\t%d\t%s\t%s\t%s\t%s\n", mark, s.Cut, s.A, s.B, s.Both, s.OnlyA, s.OnlyB,
				pval(s.PValue), pval(s.Adjusted), effStr(s.EffA), effStr(s.EffB))
		}
		tw.Flush()
		switch {
		case r.FirstSplit >= 0:
			fmt.Fprintf(ew, "  >> the chains part at cut %s\n", r.Steps[r.FirstSplit].Cut)
		case r.FirstDiscordant >= 0:
			fmt.Fprintf(ew, "  > first discordant events at cut %s (not significant)\n", r.Steps[r.FirstDiscordant].Cut)
		}
	}
	if len(r.Worst) > 0 {
		fmt.Fprintln(ew, "\nevents that fail most:")
		for _, e := range r.Worst {
			var diffs []string
			for j, v := range r.Variables {
				if e.A[j] != e.B[j] {
					diffs = append(diffs, fmt.Sprintf("%s %s/%s", v.Name, val(float64(e.A[j])), val(float64(e.B[j]))))
				}
			}
			fmt.Fprintf(ew, "  %s: %d outside, max rel %s; %s\n", keyStr(r, e.Key), e.Outside, num(e.Worst), strings.Join(diffs, ", "))
		}
	}
	if r.Binning != nil {
		fmt.Fprintf(ew, "\noverlap per bin of %s:\n", r.Binning.Var)
		tw := tabwriter.NewWriter(ew, 0, 0, 2, ' ', 0)
		if r.Binning.Hidden {
			fmt.Fprintln(tw, "  lo\thi\trho\t(counts hidden: the binning variable is blinded)")
		} else {
			fmt.Fprintln(tw, "  lo\thi\tN_A\tN_B\tN_common\trho")
		}
		for i, b := range r.Bins {
			if r.Binning.Hidden {
				fmt.Fprintf(tw, "  %s\t%s\t%s\n", val(r.Binning.Edges[i]), val(r.Binning.Edges[i+1]), num(r.Rho[i]))
			} else {
				fmt.Fprintf(tw, "  %s\t%s\t%d\t%d\t%d\t%s\n", val(r.Binning.Edges[i]), val(r.Binning.Edges[i+1]), b.NA, b.NB, b.NCommon, num(r.Rho[i]))
			}
		}
		tw.Flush()
	}
	return ew.err
}

type jsonSyncVar struct {
	Name      string           `json:"name"`
	Compared  int64            `json:"compared"`
	Outside   int64            `json:"outside_tolerance"`
	Fraction  jnum             `json:"fraction_outside"`
	MaxAbs    float64          `json:"max_abs_diff"`
	MaxAbsKey []int64          `json:"max_abs_diff_key"`
	MaxRel    float64          `json:"max_rel_diff"`
	MaxRelKey []int64          `json:"max_rel_diff_key"`
	NonFinite int64            `json:"non_finite"`
	AAboveB   int64            `json:"a_above_b"`
	ABelowB   int64            `json:"a_below_b"`
	Tolerance events.Tolerance `json:"tolerance"`
	Blinded   bool             `json:"blinded"`
	Quantiles map[string]jnum  `json:"rel_diff_quantiles"`
	Histogram []int64          `json:"rel_diff_histogram"`
	Pass      bool             `json:"pass"`
}

type jsonEff struct {
	Value jnum    `json:"value"`
	Lo    float64 `json:"lo"`
	Hi    float64 `json:"hi"`
}

type jsonStep struct {
	events.Step
	EffA jsonEff `json:"efficiency_a"`
	EffB jsonEff `json:"efficiency_b"`
}

type jsonBin struct {
	Lo      float64 `json:"lo"`
	Hi      float64 `json:"hi"`
	NA      *int64  `json:"n_a,omitempty"`
	NB      *int64  `json:"n_b,omitempty"`
	NCommon *int64  `json:"n_common,omitempty"`
	Rho     float64 `json:"rho"`
}

type jsonSync struct {
	Verdict string   `json:"verdict"`
	LabelA  string   `json:"label_a"`
	LabelB  string   `json:"label_b"`
	Keys    []string `json:"keys"`
	Matched struct {
		Common  int64     `json:"common"`
		OnlyA   int64     `json:"only_a"`
		OnlyB   int64     `json:"only_b"`
		RowsA   int64     `json:"rows_a"`
		RowsB   int64     `json:"rows_b"`
		PValue  float64   `json:"p_value"`
		SampleA [][]int64 `json:"sample_only_a"`
		SampleB [][]int64 `json:"sample_only_b"`
	} `json:"matched"`
	Variables       []jsonSyncVar  `json:"variables"`
	Cutflow         []jsonStep     `json:"cutflow"`
	FirstSplit      *string        `json:"first_split"`
	FirstDiscordant *string        `json:"first_discordant"`
	Alpha           float64        `json:"alpha"`
	CL              float64        `json:"cl"`
	Worst           []events.Event `json:"worst_events"`
	HistEdges       []float64      `json:"rel_diff_histogram_edges"`
	Overlap         []jsonBin      `json:"overlap,omitempty"`
	OverlapVar      string         `json:"overlap_var,omitempty"`
	Failures        []string       `json:"failures"`
	Parts           int            `json:"parts"`
	Spilled         bool           `json:"spilled"`
	SpilledBytes    int64          `json:"spilled_bytes"`
}

// SyncJSONValue builds the JSON document of r.
func SyncJSONValue(r *events.Result) any {
	out := jsonSync{Verdict: syncVerdict(r), LabelA: r.LabelA, LabelB: r.LabelB, Keys: r.Keys,
		Variables: []jsonSyncVar{}, Cutflow: []jsonStep{}, Alpha: r.Alpha, CL: r.CL, Worst: r.Worst,
		Failures: r.Failures, Parts: r.Parts, Spilled: r.Spilled, SpilledBytes: r.SpilledBytes}
	if out.Failures == nil {
		out.Failures = []string{}
	}
	if out.Worst == nil {
		out.Worst = []events.Event{}
	}
	m := &out.Matched
	m.Common, m.OnlyA, m.OnlyB, m.RowsA, m.RowsB, m.PValue = r.Common, r.OnlyA, r.OnlyB, r.RowsA, r.RowsB, r.PValue
	m.SampleA, m.SampleB = nonNil(r.SampleA), nonNil(r.SampleB)
	for _, v := range r.Variables {
		jv := jsonSyncVar{Name: v.Name, Compared: v.Compared, Outside: v.Outside, Fraction: jnum(v.Fraction),
			MaxAbs: v.MaxAbs.Value, MaxAbsKey: v.MaxAbs.Key, MaxRel: v.MaxRel.Value, MaxRelKey: v.MaxRel.Key,
			NonFinite: v.NonFinite, AAboveB: v.Above, ABelowB: v.Below, Tolerance: v.Tol, Blinded: v.Blinded,
			Quantiles: map[string]jnum{}, Histogram: v.Hist, Pass: v.Pass}
		for i, q := range events.QuantileLevels {
			jv.Quantiles[strconv.FormatFloat(q, 'g', -1, 64)] = jnum(v.Quantiles[i])
		}
		out.Variables = append(out.Variables, jv)
	}
	for i := 0; i < events.HistBins+3; i++ {
		out.HistEdges = append(out.HistEdges, events.HistEdge(i))
	}
	for _, s := range r.Steps {
		out.Cutflow = append(out.Cutflow, jsonStep{Step: s,
			EffA: jsonEff{jnum(s.EffA.Value), s.EffA.Lo, s.EffA.Hi},
			EffB: jsonEff{jnum(s.EffB.Value), s.EffB.Lo, s.EffB.Hi}})
	}
	if r.FirstSplit >= 0 {
		out.FirstSplit = &r.Steps[r.FirstSplit].Cut
	}
	if r.FirstDiscordant >= 0 {
		out.FirstDiscordant = &r.Steps[r.FirstDiscordant].Cut
	}
	if r.Binning != nil {
		out.OverlapVar = r.Binning.Var
		for i := range r.Bins {
			b := &r.Bins[i]
			jb := jsonBin{Lo: r.Binning.Edges[i], Hi: r.Binning.Edges[i+1], Rho: r.Rho[i]}
			if !r.Binning.Hidden {
				jb.NA, jb.NB, jb.NCommon = &b.NA, &b.NB, &b.NCommon
			}
			out.Overlap = append(out.Overlap, jb)
		}
	}
	return out
}

func nonNil(k [][]int64) [][]int64 {
	if k == nil {
		return [][]int64{}
	}
	return k
}

// SyncJSON writes r as one indented JSON object: `verdict`, `matched`
// {common, only_a, only_b, …}, `variables` [{name, compared,
// outside_tolerance, max_abs_diff, max_rel_diff, …}] and `cutflow` [{cut,
// a, b, both, only_a, only_b, p_value, …}] in cut order, and more.
func SyncJSON(w io.Writer, r *events.Result) error {
	r = cleanResult(r)
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(SyncJSONValue(r))
}
