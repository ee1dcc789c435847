package report

import (
	"fmt"
	"strings"
	"unicode/utf8"

	"tandem/compare"
	"tandem/compare/events"
)

// unsafeRune reports whether r must not reach a terminal, a page or a
// log raw: C0 and C1 control characters and DEL (an ANSI escape can
// repaint a terminal), the line and paragraph separators, and the Unicode
// bidirectional controls (an
// override such as U+202E reorders the text that follows, so what a
// reader sees is not what was written; see Unicode Standard Annex #9).
func unsafeRune(r rune) bool {
	switch {
	case r < 0x20, r >= 0x7f && r <= 0x9f, r == 0x2028, r == 0x2029:
		return true
	case r == 0x061c, r == 0x200e, r == 0x200f, r >= 0x202a && r <= 0x202e, r >= 0x2066 && r <= 0x2069:
		return true
	}
	return false
}

// EscapeText returns s with every control character, line separator and
// bidirectional control written as a visible escape (\x1b, \u202e), and
// every byte that is not UTF-8 as \xNN; printable text is unchanged. The
// reports show free text through it; commands can pass messages through
// it too.
func EscapeText(s string) string { return cleanText(s) }

// cleanText is [EscapeText].
func cleanText(s string) string {
	if !strings.ContainsFunc(s, unsafeRune) && utf8.ValidString(s) {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); {
		r, n := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && n <= 1:
			fmt.Fprintf(&b, `\x%02x`, s[i])
		case unsafeRune(r) && r < 0x100:
			fmt.Fprintf(&b, `\x%02x`, r)
		case unsafeRune(r):
			fmt.Fprintf(&b, `\u%04x`, r)
		default:
			b.WriteString(s[i : i+n])
		}
		i += n
	}
	return b.String()
}

func cleanList(xs []string) []string {
	if !needsCleaning(xs...) {
		return xs
	}
	out := make([]string, len(xs))
	for i, x := range xs {
		out[i] = cleanText(x)
	}
	return out
}

func needsCleaning(xs ...string) bool {
	for _, x := range xs {
		if cleanText(x) != x {
			return true
		}
	}
	return false
}

// cleanSummary returns s with every free text (titles, notes, names,
// labels, files, columns, reasons, warnings and details) safe to show:
// s itself when nothing needs cleaning, else a copy that shares the
// numbers with s.
func cleanSummary(s *Summary) *Summary {
	if !summaryNeedsCleaning(s) && !teamsNeedCleaning(s.Teams) {
		return s
	}
	c := *s
	c.Teams = cleanTeams(s.Teams)
	c.Title, c.Campaign, c.Notes = cleanText(s.Title), cleanText(s.Campaign), cleanList(s.Notes)
	c.Accepted = make([]Acceptance, len(s.Accepted))
	for i, a := range s.Accepted {
		c.Accepted[i] = Acceptance{By: cleanList(a.By), Reason: cleanText(a.Reason)}
	}
	c.Entries = make([]Entry, len(s.Entries))
	for i, e := range s.Entries {
		e.Observable, e.Title, e.XLabel, e.YLabel = cleanText(e.Observable), cleanText(e.Title), cleanText(e.XLabel), cleanText(e.YLabel)
		e.Teams = [2]string{cleanText(e.Teams[0]), cleanText(e.Teams[1])}
		e.Files = [2]string{cleanText(e.Files[0]), cleanText(e.Files[1])}
		if e.Result != nil {
			r := *e.Result
			r.Column, r.LabelA, r.LabelB = cleanText(r.Column), cleanText(r.LabelA), cleanText(r.LabelB)
			r.Warnings = cleanList(r.Warnings)
			r.Criteria = append([]compare.Criterion(nil), r.Criteria...)
			for k := range r.Criteria {
				cr := &r.Criteria[k]
				cr.Name, cr.Detail, cr.Note = cleanText(cr.Name), cleanText(cr.Detail), cleanText(cr.Note)
			}
			r.Sources = append([]compare.Source(nil), r.Sources...)
			for k := range r.Sources {
				r.Sources[k].Name, r.Sources[k].PerBin = cleanText(r.Sources[k].Name), cleanText(r.Sources[k].PerBin)
			}
			e.Result = &r
		}
		c.Entries[i] = e
	}
	return &c
}

func summaryNeedsCleaning(s *Summary) bool {
	if needsCleaning(s.Title, s.Campaign) || needsCleaning(s.Notes...) {
		return true
	}
	for _, a := range s.Accepted {
		if needsCleaning(a.Reason) || needsCleaning(a.By...) {
			return true
		}
	}
	for _, e := range s.Entries {
		if needsCleaning(e.Observable, e.Title, e.XLabel, e.YLabel, e.Teams[0], e.Teams[1], e.Files[0], e.Files[1]) {
			return true
		}
		if e.Result == nil {
			continue
		}
		if needsCleaning(e.Column, e.LabelA, e.LabelB) || needsCleaning(e.Warnings...) {
			return true
		}
		for _, c := range e.Criteria {
			if needsCleaning(c.Name, c.Detail, c.Note) {
				return true
			}
		}
		for _, so := range e.Sources {
			if needsCleaning(so.Name, so.PerBin) {
				return true
			}
		}
	}
	return false
}

// cleanResult returns r with every free text of an event-level sync (the
// labels, the key, variable and cut names, the binning variable and the
// failures) safe to show: r itself when nothing needs cleaning, else a
// copy that shares the numbers with r. Names come from the tables' headers,
// Parquet schemas and ROOT branches, which may hold anything.
func cleanResult(r *events.Result) *events.Result {
	s := r.Summary
	need := needsCleaning(s.LabelA, s.LabelB) || needsCleaning(s.Keys...) || needsCleaning(s.Cuts...) || needsCleaning(r.Failures...)
	for _, v := range r.Variables {
		need = need || needsCleaning(v.Name)
	}
	for _, v := range s.Vars {
		need = need || needsCleaning(v.Name)
	}
	for _, st := range r.Steps {
		need = need || needsCleaning(st.Cut)
	}
	if s.Binning != nil {
		need = need || needsCleaning(s.Binning.Var)
	}
	if !need {
		return r
	}
	cs := *s
	cs.LabelA, cs.LabelB = cleanText(s.LabelA), cleanText(s.LabelB)
	cs.Keys, cs.Cuts = cleanList(s.Keys), cleanList(s.Cuts)
	cs.Vars = append([]events.VarSpec(nil), s.Vars...)
	for i := range cs.Vars {
		cs.Vars[i].Name = cleanText(cs.Vars[i].Name)
	}
	if s.Binning != nil {
		b := *s.Binning
		b.Var = cleanText(b.Var)
		cs.Binning = &b
	}
	c := *r
	c.Summary = &cs
	c.Variables = append([]events.VarResult(nil), r.Variables...)
	for i := range c.Variables {
		c.Variables[i].Name = cleanText(c.Variables[i].Name)
	}
	c.Steps = append([]events.Step(nil), r.Steps...)
	for i := range c.Steps {
		c.Steps[i].Cut = cleanText(c.Steps[i].Cut)
	}
	c.Failures = cleanList(r.Failures)
	return &c
}

// cleanStamp returns st with its free text (the tool and the file names)
// safe to show: st itself when nothing needs cleaning.
func cleanStamp(st *Stamp) *Stamp {
	if st == nil {
		return nil
	}
	dirty := needsCleaning(st.Tool)
	for _, in := range st.Inputs {
		dirty = dirty || needsCleaning(in.Name, in.SHA256)
	}
	if !dirty {
		return st
	}
	c := *st
	c.Tool = cleanText(st.Tool)
	c.Inputs = make([]Input, len(st.Inputs))
	for i, in := range st.Inputs {
		c.Inputs[i] = Input{Name: cleanText(in.Name), SHA256: cleanText(in.SHA256)}
	}
	return &c
}
