package campaign

import (
	"bytes"
	"errors"
	"fmt"
	"strings"
	"sync"

	"tandem/blind/internal/format"
	"tandem/report"
)

// Notes are the lines a report of the campaign shows on top: its state,
// each revision after an opening with its reason, accepted risks and
// disagreements, who signed and what is still incomplete.
func (c *Campaign) Notes(cmp *Comparison) []string {
	state := "blinded"
	if c.Unblinded() {
		state = "unblinded"
	}
	notes := []string{fmt.Sprintf("campaign %s is %s; %d ledger entries", c.Protocol.Campaign, state, len(c.Ledger))}
	if cmp != nil {
		for _, p := range cmp.Incomplete {
			notes = append(notes, fmt.Sprintf("%s: incomplete, %s", p.Observable, p.Reason))
		}
	}
	st := c.State()
	for _, o := range c.Protocol.Observables {
		os := st.Observables[o.Name]
		if n := os.Round(); n > 1 || len(os.Revisions) > 0 {
			notes = append(notes, fmt.Sprintf("%s: round %d", o.Name, n))
		}
		for _, s := range os.Revisions {
			notes = append(notes, revisionNote(s))
		}
		for _, col := range o.Columns {
			if col.AcceptRisk != "" {
				notes = append(notes, fmt.Sprintf("%s/%s: the protocol accepts the risk of a breakable blinding map: %s", o.Name, col.Name, col.AcceptRisk))
			}
		}
	}
	for _, a := range st.Amends {
		notes = append(notes, fmt.Sprintf("protocol amended by %s at entry %d: %s", a.Actor, a.Seq, a.Data["reason"]))
	}
	var signed []string
	reasons := map[string][]string{}
	var order []string
	for _, s := range c.Signoffs() {
		if !s.Valid {
			continue
		}
		signed = append(signed, s.Party)
		for _, r := range acceptedTexts(s.Statement.Accepted) {
			if reasons[r] == nil {
				order = append(order, r)
			}
			reasons[r] = append(reasons[r], s.Party)
		}
	}
	for _, r := range order {
		notes = append(notes, fmt.Sprintf("disagreement accepted by %s: %s", strings.Join(reasons[r], ", "), r))
	}
	if len(signed) > 0 {
		notes = append(notes, "signed off by "+strings.Join(signed, ", "))
		if cmp != nil {
			notes = append(notes, "signed comparison digest "+cmp.Digest)
		}
	} else {
		notes = append(notes, "no valid sign-offs yet")
	}
	return notes
}

// Accepted lists the disagreements the valid sign-offs accept, for
// [report.Summary.Accepted].
func (c *Campaign) Accepted() []report.Acceptance {
	var out []report.Acceptance
	idx := map[string]int{}
	for _, s := range c.Signoffs() {
		if !s.Valid {
			continue
		}
		for _, r := range acceptedTexts(s.Statement.Accepted) {
			if i, ok := idx[r]; ok {
				out[i].By = append(out[i].By, s.Party)
				continue
			}
			idx[r] = len(out)
			out = append(out, report.Acceptance{By: []string{s.Party}, Reason: r})
		}
	}
	return out
}

// acceptedTexts words a statement's accepted-disagreement lines
// ("O C A B REASON") as "O/C (A vs B): REASON".
func acceptedTexts(lines []string) []string {
	var out []string
	for _, l := range lines {
		f := strings.SplitN(l, " ", 5)
		if len(f) < 5 {
			continue // ParseStatement refuses such a line
		}
		out = append(out, f[0]+"/"+f[1]+" ("+f[2]+" vs "+f[3]+"): "+f[4])
	}
	return out
}

// BlindedSummary is the comparison of the blinded tables with the notes on
// top, for reports. An observable that cannot be compared yet is missing
// from it, as incomplete (a team has not sealed it) or pending (sealed,
// waiting for the blind step); a present sign-off that is stale is listed.
func (c *Campaign) BlindedSummary() (*report.Summary, *Comparison, error) {
	cmp, err := c.Compare()
	if err != nil {
		return nil, nil, err
	}
	s := *cmp.Summary
	s.Notes = append(append([]string(nil), s.Notes...), c.Notes(cmp)...)
	s.Accepted = c.Accepted()
	st := c.State()
	teams := c.Protocol.Teams()
	for _, p := range cmp.Incomplete {
		v := report.VerdictIncomplete
		if os := st.Observables[p.Observable]; os != nil && os.Sealed(teams) {
			v = report.VerdictPending
		}
		s.Missing = append(s.Missing, report.Missing{Observable: p.Observable, Verdict: v, Reason: p.Reason})
	}
	for _, so := range c.Signoffs() {
		if so.Present && so.Stale {
			s.Stale = append(s.Stale, so.Party+": "+staleReason(firstStale(so)))
		}
	}
	return &s, cmp, nil
}

// ReportInputs are the files a report of the campaign rests on, each with
// the SHA-256 the ledger records for it: campaign.toml, then the compared
// tables (blinded, or the unblinded ones in final reports), by
// observable and team.
func (c *Campaign) ReportInputs(final bool) []report.Input {
	out := []report.Input{{Name: ProtocolFile, SHA256: format.Digest(c.ProtocolBytes)}}
	st := c.State()
	var tables map[Slot]*Published
	if cmp, err := c.Compare(); err == nil {
		tables = cmp.Tables
	}
	for _, o := range c.Protocol.Observables {
		for _, t := range c.Protocol.Teams() {
			if final {
				rel := Slot{t, o.Name}.UnblindedPath()
				if d, ok := st.Files[rel]; ok {
					out = append(out, report.Input{Name: rel, SHA256: d})
				}
				continue
			}
			if p := tables[Slot{t, o.Name}]; p != nil {
				out = append(out, report.Input{Name: p.Path, SHA256: p.Digest})
			}
		}
	}
	return out
}

// FinalSummary is the comparison of the true tables, with the notes.
func (c *Campaign) FinalSummary() (*report.Summary, error) {
	s, err := c.CompareUnblinded()
	if err != nil {
		return nil, err
	}
	cmp, err := c.Compare()
	if err != nil {
		return nil, err
	}
	s.Notes = append(c.Notes(cmp), "the pulls, χ² and p-values equal those of the blinded comparison that was signed")
	s.Accepted = c.Accepted()
	return s, nil
}

// ReportPath is the campaign-relative path of a report.
func ReportPath(stem, format string) string {
	return ReportsDir + "/" + stem + report.Extension(format)
}

// WriteReports renders s in each format to reports/STEM.EXT, each file
// atomically, and returns the paths written. The formats are rendered at
// once, on all cores (the renderers only read s), then written; a format
// that fails to render writes nothing, and a failed write leaves the
// others written.
func (c *Campaign) WriteReports(s *report.Summary, formats []string, stem string) ([]string, error) {
	stamp := report.NewStamp(c.ReportInputs(stem == "final")...)
	bufs := make([]bytes.Buffer, len(formats))
	errs := make([]error, len(formats))
	var wg sync.WaitGroup
	for i, f := range formats {
		wg.Go(func() { errs[i] = report.Render(&bufs[i], f, s, report.Style{Stamp: stamp}) })
	}
	wg.Wait()
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	// The files are written at once too: their syncs overlap.
	out := make([]string, len(formats))
	for i, f := range formats {
		out[i] = ReportPath(stem, f)
		wg.Go(func() {
			if err := c.root.WriteAtomic(out[i], bufs[i].Bytes()); err != nil {
				errs[i] = fmt.Errorf("writing %s: %w", c.Path(out[i]), err)
			}
		})
	}
	wg.Wait()
	var written []string
	for i := range out {
		if errs[i] == nil {
			written = append(written, out[i])
		}
	}
	return written, errors.Join(errs...)
}

// WriteFinalReports writes the true-value reports in every format.
func (c *Campaign) WriteFinalReports() ([]string, error) {
	s, err := c.FinalSummary()
	if err != nil {
		return nil, err
	}
	return c.WriteReports(s, report.Formats, "final")
}

// WriteBlindedReports writes the blinded comparison in every format.
func (c *Campaign) WriteBlindedReports() ([]string, error) {
	s, _, err := c.BlindedSummary()
	if err != nil {
		return nil, err
	}
	return c.WriteReports(s, report.Formats, "campaign")
}

func reportFormats() []string { return report.Formats }
