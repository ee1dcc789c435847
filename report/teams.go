package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"tandem/compare"
)

// The N-team section of the reports: for three or more teams, each
// compared column's N-team χ², every team's leave-one-out deviation and
// the team that departs. The pairwise comparisons that follow it are
// diagnostics outside the α family.

// teamsIntro says what the N-team section is and what the pairs below are.
const teamsIntro = "the N-team test judges; the pairwise comparisons are diagnostics, not in the α family"

// comparisons counts what the verdict judges: the N-team tests and the
// pairwise comparisons (whose tolerances and comparable-bins checks
// count).
func comparisons(s *Summary) int { return len(s.Entries) + len(s.Teams) }

// teamsTitle names one N-team test, e.g. "rate / flux (3 teams)".
func teamsTitle(t *compare.TeamsResult) string {
	s := t.Observable
	if t.Column != "" && t.Column != t.Observable {
		s += " / " + t.Column
	}
	return s + " (" + strconv.Itoa(len(t.Teams)) + " teams)"
}

// departingLine names the departing team: the teams whose leave-one-out
// criteria fail, else the team farthest from the others and that it is
// within tolerance.
func departingLine(t *compare.TeamsResult) string {
	if t.Test == nil {
		return ""
	}
	switch len(t.Departs) {
	case 0:
	case 1:
		return "departing team: " + t.Departs[0]
	default:
		return "departing team: " + t.Departs[0] + " (failing too: " + strings.Join(t.Departs[1:], ", ") +
			"; a departing team also pulls the combination the others are held to)"
	}
	d := t.Test.Departing()
	return fmt.Sprintf("departing team: none (farthest from the others: %s, smallest leave-one-out p = %s, before adjustment)", d.Team, pval(d.MinPValue()))
}

// teamsChi2Line is the N-team χ² in words.
func teamsChi2Line(t *compare.TeamsResult) string {
	return fmt.Sprintf("N-team χ²/ndf = %s/%d, p = %s (%d bins, %d degrees of freedom each)",
		num(t.Test.Chi2), t.Test.NDF, pval(t.Test.PValue), len(t.Lo), len(t.Teams)-1)
}

// teamSourcesLine lists the error sources with their correlation between
// teams.
func teamSourcesLine(t *compare.TeamsResult) string {
	var parts []string
	for _, s := range t.Sources {
		rho := num(s.Rho)
		if !s.Declared {
			rho += " (not declared)"
		}
		parts = append(parts, s.Name+" ρ = "+rho)
	}
	if len(parts) == 0 {
		return ""
	}
	return "error sources (correlation between any two teams): " + strings.Join(parts, "; ")
}

// looRows are the leave-one-out table: a header and one row per team.
func looRows(t *compare.TeamsResult) [][]string {
	rows := [][]string{{"team", "χ²/ndf", "p", "mean pull", "shift z", "shift p"}}
	for _, d := range t.Test.LeaveOneOut {
		rows = append(rows, []string{d.Team, num(d.Chi2) + "/" + strconv.Itoa(d.NDF), pval(d.PValue), num(d.MeanPull), num(d.ShiftZ), pval(d.ShiftPValue)})
	}
	return rows
}

// teamsText writes the N-team section of the text report.
func teamsText(ew *page, s *Summary, st Style) {
	if len(s.Teams) == 0 {
		return
	}
	ew.s("\n").s(strconv.Itoa(len(s.Teams[0].Teams))).s(" teams: ").s(teamsIntro).s("\n")
	for _, t := range s.Teams {
		ew.s("\n== ").s(teamsTitle(t)).s(": ").s(textVerdict(st, verdictOf(t.Pass), false)).s("\n")
		var files []string
		for i, team := range t.Teams {
			if i < len(t.Files) && t.Files[i] != team {
				files = append(files, team+": "+t.Files[i])
			}
		}
		if len(files) > 0 {
			ew.s("  ").s(strings.Join(files, "; ")).s("\n")
		}
		if t.Test == nil {
			ew.s("  no N-team test: no bin where every team has an uncertainty\n")
		} else {
			ew.s("  ").s(teamsChi2Line(t)).s("\n")
			ew.s("  ").s(departingLine(t)).s("\n")
		}
		crit := [][]string{{"criterion", "value", "adjusted", "limit", "result"}}
		for _, c := range t.Criteria {
			res := "pass"
			if !c.Pass {
				res = paint(st, ansiRed, "FAIL")
			}
			name, v, adj, lim := critCells(c)
			crit = append(crit, []string{name, v, adj, lim, res})
		}
		if len(t.Criteria) > 0 {
			alignTable(ew, "  ", crit, false)
		}
		for _, c := range t.Criteria {
			if !c.Pass && c.Detail != "" {
				fmt.Fprintf(ew, "  why: %s: %s\n", c.Name, c.Detail)
			}
		}
		if l := teamSourcesLine(t); l != "" {
			ew.s("  ").s(l).s("\n")
		}
		for _, wn := range t.Warnings {
			ew.s("  warning: ").s(wn).s("\n")
		}
		if t.Test != nil {
			ew.s("  leave-one-out: each team against the combination of the others\n")
			alignTable(ew, "  ", looRows(t), true)
		}
	}
	ew.s("\npairwise diagnostics:\n")
}

// teamsMarkdown writes the N-team section of the Markdown report.
func teamsMarkdown(ew *page, s *Summary) {
	if len(s.Teams) == 0 {
		return
	}
	ew.s(capitalize(mdEscape(strconv.Itoa(len(s.Teams[0].Teams)) + " teams: " + teamsIntro))).s(".\n\n")
	for _, t := range s.Teams {
		ew.s("### ").s(mdEscape(teamsTitle(t))).s(": ").s(mdVerdict(t.Pass)).s("\n\n")
		if t.Test == nil {
			ew.s("No N-team test: no bin where every team has an uncertainty.\n\n")
		} else {
			ew.s(mdEscape(capitalize(teamsChi2Line(t)))).s(".\n\n")
			ew.s("**").s(mdEscape(capitalize(departingLine(t)))).s("**\n\n")
		}
		if len(t.Criteria) > 0 {
			ew.s("| criterion | value | adjusted | limit | result |\n| --- | ---: | ---: | ---: | --- |\n")
			for _, c := range t.Criteria {
				res := "pass"
				if !c.Pass {
					res = "**FAIL**: " + mdEscape(c.Detail)
				}
				name, v, adj, lim := critCells(c)
				ew.s("| ").s(mdEscape(name)).s(" | ").s(v).s(" | ").s(adj).s(" | ").s(mdEscape(lim)).s(" | ").s(res).s(" |\n")
			}
			ew.s("\n")
		}
		if l := teamSourcesLine(t); l != "" {
			ew.s(mdEscape(capitalize(l))).s(".\n\n")
		}
		for _, wn := range t.Warnings {
			ew.s("> warning: ").s(mdEscape(wn)).s("\n\n")
		}
		if t.Test == nil {
			continue
		}
		rows := looRows(t)
		ew.s("Leave-one-out (each team against the combination of the others):\n\n| ").s(strings.Join(rows[0], " | ")).s(" |\n| --- | ---: | ---: | ---: | ---: | ---: |\n")
		for _, r := range rows[1:] {
			r[0] = mdEscape(r[0])
			ew.s("| ").s(strings.Join(r, " | ")).s(" |\n")
		}
		ew.s("\n")
	}
	ew.s("Pairwise diagnostics:\n\n")
}

// jsonTeams is one N-team test in the JSON document (the top-level
// "teams" list).
type jsonTeams struct {
	Name        string          `json:"name"`
	Column      string          `json:"column"`
	Teams       []string        `json:"teams"`
	Files       []string        `json:"files"`
	Bins        int             `json:"bins"`
	Chi2        jnum            `json:"chi2"`
	NDF         int             `json:"ndf"`
	PValue      jnum            `json:"p_value"`
	Verdict     string          `json:"verdict"`
	Departing   string          `json:"departing"`
	Departs     []string        `json:"departs"`
	Failures    []string        `json:"failures"`
	Criteria    []jsonCriterion `json:"criteria"`
	Alpha       jnum            `json:"alpha"`
	Family      int             `json:"family_size"`
	Sources     []jsonTeamSrc   `json:"sources"`
	Warnings    []string        `json:"warnings"`
	LeaveOneOut []jsonLOO       `json:"leave_one_out"`
	PerBin      jsonTeamBins    `json:"per_bin"`
}

type jsonTeamSrc struct {
	Name     string `json:"name"`
	Rho      jnum   `json:"rho"`
	Declared bool   `json:"declared"`
}

type jsonLOO struct {
	Team        string `json:"team"`
	Chi2        jnum   `json:"chi2"`
	NDF         int    `json:"ndf"`
	PValue      jnum   `json:"p_value"`
	MeanPull    jnum   `json:"mean_pull"`
	ShiftZ      jnum   `json:"shift_z"`
	ShiftPValue jnum   `json:"shift_p_value"`
	Pulls       any    `json:"pulls"`
}

type jsonTeamBins struct {
	Lo            any   `json:"lo"`
	Hi            any   `json:"hi"`
	Values        []any `json:"values"`
	Errors        []any `json:"errors"`
	Chi2          any   `json:"chi2"`
	Combined      any   `json:"combined"`
	CombinedError any   `json:"combined_error"`
}

// jsonTeamsValue builds the "teams" list; nil when there is no N-team
// test (the key is then left out).
func jsonTeamsValue(s *Summary) []jsonTeams {
	var out []jsonTeams
	for _, t := range s.Teams {
		jt := jsonTeams{Name: t.Observable, Column: t.Column, Teams: t.Teams, Files: t.Files, Bins: len(t.Lo),
			Verdict: t.Verdict(), Departing: t.Departing, Departs: t.Departs, Failures: t.Failures(),
			Criteria: []jsonCriterion{}, Alpha: jnum(t.Alpha), Family: t.Family, Sources: []jsonTeamSrc{},
			Warnings: t.Warnings, LeaveOneOut: []jsonLOO{}, Chi2: jnum(math.NaN()), PValue: jnum(math.NaN())}
		if jt.Departs == nil {
			jt.Departs = []string{}
		}
		if jt.Warnings == nil {
			jt.Warnings = []string{}
		}
		if jt.Files == nil {
			jt.Files = []string{}
		}
		for _, c := range t.Criteria {
			jc := jsonCriterion{Name: c.Name, Kind: c.Kind, Value: jnum(c.Value), Limit: jnum(c.Limit), Op: c.Op,
				Pass: c.Pass, Detail: c.Detail, Note: c.Note, Bins: c.Bins}
			if c.Adjusted != nil {
				v := jnum(*c.Adjusted)
				jc.Adjusted = &v
			}
			jt.Criteria = append(jt.Criteria, jc)
		}
		for _, so := range t.Sources {
			jt.Sources = append(jt.Sources, jsonTeamSrc{Name: so.Name, Rho: jnum(so.Rho), Declared: so.Declared})
		}
		jt.PerBin = jsonTeamBins{Lo: numList(t.Lo), Hi: numList(t.Hi), Values: []any{}, Errors: []any{},
			Chi2: numList(nil), Combined: numList(nil), CombinedError: numList(nil)}
		for k := range t.Values {
			jt.PerBin.Values = append(jt.PerBin.Values, numList(t.Values[k]))
			jt.PerBin.Errors = append(jt.PerBin.Errors, numList(t.Sigma[k]))
		}
		if r := t.Test; r != nil {
			jt.Chi2, jt.NDF, jt.PValue = jnum(r.Chi2), r.NDF, jnum(r.PValue)
			jt.PerBin.Chi2, jt.PerBin.Combined, jt.PerBin.CombinedError = numList(r.BinChi2), numList(r.Combined), numList(r.CombinedSigma)
			for _, d := range r.LeaveOneOut {
				jt.LeaveOneOut = append(jt.LeaveOneOut, jsonLOO{Team: d.Team, Chi2: jnum(d.Chi2), NDF: d.NDF, PValue: jnum(d.PValue),
					MeanPull: jnum(d.MeanPull), ShiftZ: jnum(d.ShiftZ), ShiftPValue: jnum(d.ShiftPValue), Pulls: numList(d.Pulls)})
			}
		}
		out = append(out, jt)
	}
	return out
}

// teams writes the "teams" list as encoding/json writes it.
func (j *jsonWriter) teams(ts []jsonTeams) {
	list(j, ts, func(t *jsonTeams) {
		j.open('{')
		j.key("name")
		j.str(t.Name)
		j.key("column")
		j.str(t.Column)
		j.key("teams")
		j.strs(t.Teams)
		j.key("files")
		j.strs(t.Files)
		j.key("bins")
		j.int(t.Bins)
		j.key("chi2")
		j.num(t.Chi2)
		j.key("ndf")
		j.int(t.NDF)
		j.key("p_value")
		j.num(t.PValue)
		j.key("verdict")
		j.str(t.Verdict)
		j.key("departing")
		j.str(t.Departing)
		j.key("departs")
		j.strs(t.Departs)
		j.key("failures")
		j.strs(t.Failures)
		j.key("criteria")
		list(j, t.Criteria, j.criterion)
		j.key("alpha")
		j.num(t.Alpha)
		j.key("family_size")
		j.int(t.Family)
		j.key("sources")
		list(j, t.Sources, func(s *jsonTeamSrc) {
			j.open('{')
			j.key("name")
			j.str(s.Name)
			j.key("rho")
			j.num(s.Rho)
			j.key("declared")
			j.bool(s.Declared)
			j.close('}')
		})
		j.key("warnings")
		j.strs(t.Warnings)
		j.key("leave_one_out")
		list(j, t.LeaveOneOut, func(d *jsonLOO) {
			j.open('{')
			j.key("team")
			j.str(d.Team)
			j.key("chi2")
			j.num(d.Chi2)
			j.key("ndf")
			j.int(d.NDF)
			j.key("p_value")
			j.num(d.PValue)
			j.key("mean_pull")
			j.num(d.MeanPull)
			j.key("shift_z")
			j.num(d.ShiftZ)
			j.key("shift_p_value")
			j.num(d.ShiftPValue)
			j.key("pulls")
			j.nums(d.Pulls)
			j.close('}')
		})
		j.key("per_bin")
		j.open('{')
		j.key("lo")
		j.nums(t.PerBin.Lo)
		j.key("hi")
		j.nums(t.PerBin.Hi)
		j.key("values")
		list(j, t.PerBin.Values, func(v *any) { j.nums(*v) })
		j.key("errors")
		list(j, t.PerBin.Errors, func(v *any) { j.nums(*v) })
		j.key("chi2")
		j.nums(t.PerBin.Chi2)
		j.key("combined")
		j.nums(t.PerBin.Combined)
		j.key("combined_error")
		j.nums(t.PerBin.CombinedError)
		j.close('}')
		j.close('}')
	})
}

// junitTeams adds one suite holding a test case per N-team test.
func junitTeams(out *junitSuites, s *Summary) {
	if len(s.Teams) == 0 {
		return
	}
	suite := junitSuite{Name: "N-team consistency: " + strings.Join(s.Teams[0].Teams, ", ")}
	if s.Campaign != "" {
		suite.Name = "campaign " + s.Campaign + ": " + suite.Name
	}
	for _, t := range s.Teams {
		c := junitCase{Name: t.Observable + " / " + t.Column + " (" + strconv.Itoa(len(t.Teams)) + " teams)", Classname: "tandem." + t.Observable}
		lines := []string{}
		if t.Test != nil {
			lines = append(lines, teamsChi2Line(t), departingLine(t))
		}
		for _, cr := range t.Criteria {
			lines = append(lines, criterionLine(cr))
		}
		c.SystemOut = &junitText{Text: strings.Join(lines, "\n")}
		if !t.Pass {
			f := t.Failures()
			if len(f) == 0 {
				f = []string{"the N-team test failed"}
			}
			msg := f[0]
			if len(t.Departs) > 0 {
				msg = "departing team: " + t.Departs[0]
			}
			c.Failure = &junitFailure{Message: msg, Type: "disagreement", Text: strings.Join(f, "\n")}
			suite.Failures++
			out.Failures++
		}
		suite.Tests++
		out.Tests++
		suite.Cases = append(suite.Cases, c)
	}
	out.Suites = append([]junitSuite{suite}, out.Suites...)
}

// teamsNeedCleaning says whether any free text of the N-team tests needs
// escaping.
func teamsNeedCleaning(ts []*compare.TeamsResult) bool {
	for _, t := range ts {
		if needsCleaning(t.Observable, t.Column, t.Departing) || needsCleaning(t.Teams...) || needsCleaning(t.Files...) ||
			needsCleaning(t.Warnings...) || needsCleaning(t.Departs...) {
			return true
		}
		for _, c := range t.Criteria {
			if needsCleaning(c.Name, c.Detail, c.Note) {
				return true
			}
		}
		for _, so := range t.Sources {
			if needsCleaning(so.Name) {
				return true
			}
		}
	}
	return false
}

// cleanTeams returns copies of ts with their free text safe to show; the
// numbers are shared.
func cleanTeams(ts []*compare.TeamsResult) []*compare.TeamsResult {
	if !teamsNeedCleaning(ts) {
		return ts
	}
	out := make([]*compare.TeamsResult, len(ts))
	for i, t := range ts {
		c := *t
		c.Observable, c.Column, c.Departing = cleanText(t.Observable), cleanText(t.Column), cleanText(t.Departing)
		c.Teams, c.Files, c.Warnings, c.Departs = cleanList(t.Teams), cleanList(t.Files), cleanList(t.Warnings), cleanList(t.Departs)
		c.Criteria = append([]compare.Criterion(nil), t.Criteria...)
		for k := range c.Criteria {
			cr := &c.Criteria[k]
			cr.Name, cr.Detail, cr.Note = cleanText(cr.Name), cleanText(cr.Detail), cleanText(cr.Note)
		}
		c.Sources = append([]compare.TeamSource(nil), t.Sources...)
		for k := range c.Sources {
			c.Sources[k].Name = cleanText(c.Sources[k].Name)
		}
		if t.Test != nil {
			r := *t.Test
			r.LeaveOneOut = append(r.LeaveOneOut[:0:0], t.Test.LeaveOneOut...)
			for k := range r.LeaveOneOut {
				r.LeaveOneOut[k].Team = cleanText(r.LeaveOneOut[k].Team)
			}
			c.Test = &r
		}
		out[i] = &c
	}
	return out
}
