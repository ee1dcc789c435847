package report

import (
	"encoding/xml"
	"fmt"
	"io"
	"strings"

	"tandem/compare/events"
)

// inputOrder says how the tables were read: in one streaming pass when
// both were sorted by key, otherwise hash-partitioned, with the bytes that
// did not fit the memory budget and went to the temporary folder.
func inputOrder(r *events.Result) string {
	switch {
	case !r.Spilled:
		return "tables sorted by key: merged in one streaming pass"
	case r.SpilledBytes == 0:
		return "tables not sorted by key: hash-partitioned and sorted in memory"
	}
	return fmt.Sprintf("tables not sorted by key: hash-partitioned, %s of rows spilled to the temporary folder (raise --mem to keep them in memory)", byteSize(r.SpilledBytes))
}

// byteSize writes a byte count in MB (10⁶ bytes) or kB.
func byteSize(n int64) string {
	if n >= 1e6 {
		return fmt.Sprintf("%.1f MB", float64(n)/1e6)
	}
	return fmt.Sprintf("%.1f kB", float64(n)/1e3)
}

// SyncMarkdown writes an event-level synchronisation as Markdown for a
// meeting page or a merge request: the verdict, the failures, the
// matching, the variables, the cut flow, the events that fail most and the
// per-bin overlap.
func SyncMarkdown(w io.Writer, r *events.Result) error {
	r = cleanResult(r)
	ew := &errWriter{w: w}
	word := "pass"
	if !r.Pass {
		word = "**fail**"
	}
	fmt.Fprintf(ew, "## Event sync %s vs %s: %s\n\n", mdEscape(r.LabelA), mdEscape(r.LabelB), word)
	for _, f := range r.Failures {
		fmt.Fprintf(ew, "- **fail**: %s\n", mdEscape(f))
	}
	if len(r.Failures) > 0 {
		fmt.Fprintln(ew)
	}
	fmt.Fprintf(ew, "Key %s. %d common events, %d only in %s, %d only in %s (McNemar p = %s, for information). %s",
		mdEscape(strings.Join(r.Keys, ", ")), r.Common, r.OnlyA, mdEscape(r.LabelA), r.OnlyB, mdEscape(r.LabelB), pval(r.PValue), mdEscape(capital(inputOrder(r))))
	if r.Parts > 1 {
		fmt.Fprintf(ew, "; %d partitions merged", r.Parts)
	}
	fmt.Fprint(ew, ".\n")
	if len(r.Variables) > 0 {
		fmt.Fprint(ew, "\n### Variables (common events)\n\n")
		fmt.Fprintln(ew, "| variable | verdict | outside | fraction | max \\|a−b\\| | at | max rel | r50 | r99 | tolerance |")
		fmt.Fprintln(ew, "| --- | --- | ---: | ---: | ---: | --- | ---: | ---: | ---: | --- |")
		for _, v := range r.Variables {
			name := mdEscape(v.Name)
			if v.Blinded {
				name += " (blinded)"
			}
			fmt.Fprintf(ew, "| %s | %s | %d / %d | %s | %s | %s | %s | %s | %s | %s |\n", name, mdVerdict(v.Pass), v.Outside, v.Compared,
				num(v.Fraction), num(v.MaxAbs.Value), mdEscape(keyStr(r, v.MaxAbs.Key)), num(v.MaxRel.Value),
				num(v.Quantiles[0]), num(v.Quantiles[2]), mdEscape(tolStr(v.Tol)))
		}
	}
	if len(r.Steps) > 0 {
		fmt.Fprintf(ew, "\n### Cut flow\n\nCumulative counts; step efficiencies with %g%% Clopper–Pearson intervals; McNemar's exact test on the common events one chain keeps and the other drops, Holm-adjusted over the steps (α = %g).\n\n", 100*r.CL, r.Alpha)
		fmt.Fprintf(ew, "| cut | %s | %s | both | only %s | only %s | eff %s | eff %s | p | adjusted |\n",
			mdEscape(r.LabelA), mdEscape(r.LabelB), mdEscape(r.LabelA), mdEscape(r.LabelB), mdEscape(r.LabelA), mdEscape(r.LabelB))
		fmt.Fprintln(ew, "| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
		for k, s := range r.Steps {
			cut := mdEscape(s.Cut)
			if k == r.FirstSplit {
				cut = "**" + cut + "** (the chains part here)"
			}
			fmt.Fprintf(ew, "| %s | %d | %d | %d | %d | %d | %s | %s | %s | %s |\n", cut, s.A, s.B, s.Both, s.OnlyA, s.OnlyB,
				effStr(s.EffA), effStr(s.EffB), pval(s.PValue), pval(s.Adjusted))
		}
	}
	if len(r.Worst) > 0 {
		fmt.Fprintf(ew, "\n### Events that fail most\n\nValues as %s / %s.\n\n| key | outside | max rel |", mdEscape(r.LabelA), mdEscape(r.LabelB))
		for _, v := range r.Variables {
			fmt.Fprintf(ew, " %s |", mdEscape(v.Name))
		}
		fmt.Fprint(ew, "\n| --- | ---: | ---: |")
		for range r.Variables {
			fmt.Fprint(ew, " ---: |")
		}
		fmt.Fprintln(ew)
		for _, e := range r.Worst {
			fmt.Fprintf(ew, "| %s | %d | %s |", mdEscape(keyStr(r, e.Key)), e.Outside, num(e.Worst))
			for j := range r.Variables {
				fmt.Fprintf(ew, " %s / %s |", val(float64(e.A[j])), val(float64(e.B[j])))
			}
			fmt.Fprintln(ew)
		}
	}
	if r.Binning != nil {
		fmt.Fprintf(ew, "\n### Overlap per bin of %s\n\n", mdEscape(r.Binning.Var))
		if r.Binning.Hidden {
			fmt.Fprint(ew, "Counts hidden: the binning variable is blinded.\n\n| lo | hi | ρ |\n| ---: | ---: | ---: |\n")
		} else {
			fmt.Fprint(ew, "| lo | hi | N_A | N_B | N_common | ρ |\n| ---: | ---: | ---: | ---: | ---: | ---: |\n")
		}
		for i, b := range r.Bins {
			fmt.Fprintf(ew, "| %s | %s |", val(r.Binning.Edges[i]), val(r.Binning.Edges[i+1]))
			if !r.Binning.Hidden {
				fmt.Fprintf(ew, " %d | %d | %d |", b.NA, b.NB, b.NCommon)
			}
			fmt.Fprintf(ew, " %s |\n", num(r.Rho[i]))
		}
	}
	return ew.err
}

func capital(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// SyncJUnit writes an event-level synchronisation as a JUnit XML document
// for CI: a suite "variables" with one case per variable (failing when any
// common event is outside tolerance), a suite "cut flow" with one case per
// step (failing when the chains keep different events at α) and a case
// "common events" that fails only when there are none.
func SyncJUnit(w io.Writer, r *events.Result) error {
	r = cleanResult(r)
	class := "sync." + r.LabelA + "." + r.LabelB
	doc := junitSuites{Name: fmt.Sprintf("event sync %s vs %s", r.LabelA, r.LabelB)}
	match := junitSuite{Name: "matching"}
	mc := junitCase{Name: "common events", Classname: class, SystemOut: &junitText{Text: fmt.Sprintf(
		"%d common, %d only in %s, %d only in %s\n%s\n", r.Common, r.OnlyA, r.LabelA, r.OnlyB, r.LabelB, inputOrder(r))}}
	if r.Common == 0 {
		mc.Failure = &junitFailure{Message: "no common events: nothing could be compared", Type: "incomplete"}
	}
	match.Cases = append(match.Cases, mc)
	vars := junitSuite{Name: "variables"}
	for _, v := range r.Variables {
		c := junitCase{Name: v.Name, Classname: class, SystemOut: &junitText{Text: fmt.Sprintf(
			"%d of %d outside tolerance (%s); max |a-b| %s at %s; max rel %s at %s\n", v.Outside, v.Compared, tolStr(v.Tol),
			num(v.MaxAbs.Value), keyStr(r, v.MaxAbs.Key), num(v.MaxRel.Value), keyStr(r, v.MaxRel.Key))}}
		if !v.Pass {
			c.Failure = &junitFailure{Message: fmt.Sprintf("%d of %d common events outside tolerance", v.Outside, v.Compared), Type: "tolerance"}
		}
		vars.Cases = append(vars.Cases, c)
	}
	cuts := junitSuite{Name: "cut flow"}
	for _, s := range r.Steps {
		c := junitCase{Name: s.Cut, Classname: class, SystemOut: &junitText{Text: fmt.Sprintf(
			"%s %d, %s %d, both %d, only %s %d, only %s %d; eff %s %s, eff %s %s\n", r.LabelA, s.A, r.LabelB, s.B, s.Both,
			r.LabelA, s.OnlyA, r.LabelB, s.OnlyB, r.LabelA, effStr(s.EffA), r.LabelB, effStr(s.EffB))}}
		if s.Differs {
			c.Failure = &junitFailure{Message: fmt.Sprintf("the chains keep different events: McNemar p = %s, Holm-adjusted %s < α = %g",
				pval(s.PValue), pval(s.Adjusted), r.Alpha), Type: "cutflow"}
		}
		cuts.Cases = append(cuts.Cases, c)
	}
	for _, s := range []junitSuite{match, vars, cuts} {
		if len(s.Cases) == 0 {
			continue
		}
		s.Tests = len(s.Cases)
		for _, c := range s.Cases {
			if c.Failure != nil {
				s.Failures++
			}
		}
		doc.Tests += s.Tests
		doc.Failures += s.Failures
		doc.Suites = append(doc.Suites, s)
	}
	if _, err := io.WriteString(w, xml.Header); err != nil {
		return err
	}
	enc := xml.NewEncoder(w)
	enc.Indent("", "  ")
	if err := enc.Encode(doc); err != nil {
		return err
	}
	_, err := io.WriteString(w, "\n")
	return err
}
