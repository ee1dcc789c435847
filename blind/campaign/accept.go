package campaign

import (
	"fmt"
	"maps"
	"slices"
	"strings"
	"unicode"

	"tandem/blind/protocol"
)

// MinReasonWords is the fewest words a reason for accepting a
// disagreement holds: it says what differs and why that is acceptable,
// which "ok" or "understood" do not.
const MinReasonWords = 3

// ParseAcceptance reads the reasons for accepting disagreements, each
// "OBSERVABLE=REASON" or "OBSERVABLE/COLUMN=REASON", into a map from
// "OBSERVABLE/COLUMN" (or "OBSERVABLE" for an observable with one column,
// which stands for that column) to the reason. It refuses an unknown
// observable or column, an observable of several columns named without
// its column, a comparison named twice, and a reason that is empty, of
// fewer than MinReasonWords words, or holds a character a statement
// cannot. Empty strings are skipped.
func (c *Campaign) ParseAcceptance(accept []string) (map[string]string, error) {
	out := map[string]string{}
	for _, a := range accept {
		if a == "" {
			continue
		}
		key, reason, ok := strings.Cut(a, "=")
		if !ok {
			return nil, fmt.Errorf("--accept-disagreement %q: give OBSERVABLE=REASON (or OBSERVABLE/COLUMN=REASON), one for each failing comparison", a)
		}
		key = strings.TrimSpace(key)
		on, cn, hasCol := strings.Cut(key, "/")
		o := c.Protocol.Observable(on)
		if o == nil {
			return nil, fmt.Errorf("--accept-disagreement %q: %q is not an observable of campaign %s", a, on, c.Protocol.Campaign)
		}
		switch {
		case hasCol && o.Column(cn) == nil:
			return nil, fmt.Errorf("--accept-disagreement %q: observable %s has no column %q", a, on, cn)
		case !hasCol && len(o.Columns) > 1:
			return nil, fmt.Errorf("--accept-disagreement %q: observable %s has %d columns; name the one accepted: %s/COLUMN=REASON", a, on, len(o.Columns), on)
		case !hasCol:
			key = on + "/" + o.Columns[0].Name
		}
		if _, twice := out[key]; twice {
			return nil, fmt.Errorf("--accept-disagreement: %s is given two reasons; give one", key)
		}
		if err := protocol.CleanText(reason); err != nil {
			return nil, fmt.Errorf("the reason for accepting the disagreement of %s: %v", key, err)
		}
		reason = strings.TrimSpace(reason)
		if n := len(strings.FieldsFunc(reason, func(r rune) bool { return unicode.IsSpace(r) })); n < MinReasonWords {
			what := "is empty"
			if n > 0 {
				what = fmt.Sprintf("has %d word(s)", n)
			}
			return nil, fmt.Errorf("the reason for accepting the disagreement of %s %s: a reason says, in at least %d words, what differs and why it is accepted (for example which correction one team has not applied yet)", key, what, MinReasonWords)
		}
		out[key] = reason
	}
	return out, nil
}

// acceptLines gives each failing comparison its reason, in the order of
// the comparisons: "OBSERVABLE COLUMN TEAM-A TEAM-B REASON". Every failing
// comparison needs a reason, and a reason for a comparison that passes
// is refused.
func acceptLines(cmp *Comparison, reasons map[string]string) ([]string, error) {
	var out, missing []string
	used := map[string]bool{}
	for _, e := range cmp.Summary.Entries {
		key := e.Observable + "/" + e.Column
		if e.Verdict() != string(Fail) {
			continue
		}
		r, ok := reasons[key]
		if !ok {
			missing = append(missing, key+" ("+e.Teams[0]+" vs "+e.Teams[1]+")")
			continue
		}
		used[key] = true
		out = append(out, e.Observable+" "+e.Column+" "+e.Teams[0]+" "+e.Teams[1]+" "+r)
	}
	for _, key := range slices.Sorted(maps.Keys(reasons)) {
		if !used[key] {
			return nil, fmt.Errorf("--accept-disagreement %s: that comparison agrees; there is no disagreement to accept", key)
		}
	}
	if len(missing) > 0 {
		return nil, refuse(StepSign, ProblemState, "%s disagree(s); signing needs a reason for each: --accept-disagreement OBSERVABLE=REASON (OBSERVABLE/COLUMN=REASON when the observable has several columns)", strings.Join(missing, ", "))
	}
	return out, nil
}
