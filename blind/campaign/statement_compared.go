package campaign

import (
	"fmt"
	"strings"
)

// comparedLines lists a comparison's entries as a statement's compared
// lines, "OBSERVABLE COLUMN TEAM-A TEAM-B VERDICT", in the order
// [ComparisonDigest] hashes them.
func comparedLines(cmp *Comparison) []string {
	out := make([]string, 0, len(cmp.Summary.Entries))
	for _, e := range cmp.Summary.Entries {
		out = append(out, fmt.Sprintf("%s %s %s %s %s", e.Observable, e.Column, e.Teams[0], e.Teams[1], e.Verdict()))
	}
	return out
}

// comparedDiff says how a statement's compared lines differ from the
// recomputed ones, or returns "" when they are the same.
func comparedDiff(stated, recomputed []string) string {
	want := map[string]string{}
	for _, l := range recomputed {
		if i := strings.LastIndexByte(l, ' '); i > 0 {
			want[l[:i]] = l[i+1:]
		}
	}
	var diffs []string
	same := len(stated) == len(recomputed)
	for i, l := range stated {
		if same && l != recomputed[i] {
			same = false
		}
		j := strings.LastIndexByte(l, ' ')
		if j < 0 {
			continue
		}
		id, v := l[:j], l[j+1:]
		switch w, ok := want[id]; {
		case !ok:
			diffs = append(diffs, fmt.Sprintf("%s is not a comparison of the campaign", id))
		case w != v:
			diffs = append(diffs, fmt.Sprintf("%s is listed %s, the blinded tables give %s", id, v, w))
		}
		delete(want, id)
	}
	for _, l := range recomputed {
		if i := strings.LastIndexByte(l, ' '); i > 0 {
			if _, left := want[l[:i]]; left {
				diffs = append(diffs, fmt.Sprintf("%s is missing", l[:i]))
			}
		}
	}
	switch {
	case same:
		return ""
	case len(diffs) == 0:
		return "the comparisons are listed in another order"
	}
	return strings.Join(diffs, "; ")
}
