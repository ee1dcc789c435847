package campaign

import (
	"fmt"
	"slices"

	"tandem/blind/protocol"
)

// Observable states in a [Status].
const (
	StateWaiting   = "waiting"   // not every team has sealed
	StateSealed    = "sealed"    // every team sealed; not opened yet
	StateOpen      = "open"      // compared in the common map
	StateUnblinded = "unblinded" // true values revealed
)

// Campaign states in a [Status].
const (
	CampaignNotStarted = "not-started"
	CampaignSealing    = "sealing"
	CampaignSigning    = "signing"
	CampaignReady      = "ready-to-unblind"
	CampaignUnblinded  = "unblinded"
)

// Status is where a campaign stands and what each party does next; it
// prints as text or, through its JSON tags, for dashboards.
type Status struct {
	Campaign     string             `json:"campaign"`
	State        string             `json:"state"`
	LedgerLength int                `json:"ledger_entries"`
	Verdict      Verdict            `json:"verdict,omitempty"`
	Observables  []ObservableStatus `json:"observables"`
	Signoffs     []SignoffStatus    `json:"signoffs"`
	// Logs is each party's log as this folder holds it: what each site
	// has taken that this clone has seen.
	Logs     []LogStatus `json:"logs"`
	Next     []Action    `json:"next"`
	Notes    []string    `json:"notes,omitempty"`
	Problems []Problem   `json:"problems,omitempty"`
}

// ObservableStatus is one observable's state.
type ObservableStatus struct {
	Name    string       `json:"name"`
	Title   string       `json:"title,omitempty"`
	State   string       `json:"state"`
	Round   int          `json:"round"`
	Verdict Verdict      `json:"verdict"`
	Teams   []TeamStatus `json:"teams"`
}

// TeamStatus is one team's table of an observable.
type TeamStatus struct {
	Team    string `json:"team"`
	Version int    `json:"version"` // 0: not sealed
	// Published is "none", "team" (its own map) or "common".
	Published string `json:"published"`
}

// LogStatus is one party's log: its number of entries and its last step.
type LogStatus struct {
	Party   string `json:"party"`
	Entries int    `json:"entries"`
	Last    string `json:"last,omitempty"` // the last entry in words
	Time    string `json:"time,omitempty"` // and its time
}

// Action is a next step for one party.
type Action struct {
	Party string `json:"party"`
	Do    string `json:"do"`
}

func (a Action) String() string { return a.Party + ": " + a.Do }

// custodianFlags are the flags of a custodian step in a hint: the age or
// SSH identity that opens key.age, and the SSH key that signs the entry
// (FILE is a placeholder the reader fills in; with ssh-agent and
// TANDEM_CUSTODIAN_IDENTITY_FILE set, both may be left out).
const custodianFlags = " --identity FILE --key FILE"

// Status works out the campaign's state and every party's next action.
func (c *Campaign) Status() (*Status, error) {
	s := &Status{Campaign: c.Protocol.Campaign, LedgerLength: len(c.Ledger), Observables: []ObservableStatus{}, Signoffs: []SignoffStatus{}, Logs: []LogStatus{}, Next: []Action{}}
	if !c.Started() {
		s.State = CampaignNotStarted
		s.Next = append(s.Next, Action{"custodian", "start the campaign: tandem init " + c.Dir + " --key FILE"})
		return s, nil
	}
	names := []string{protocol.RoleCustodian}
	for _, q := range c.Protocol.Parties {
		names = append(names, q.Name)
	}
	for _, name := range names {
		ls := LogStatus{Party: name}
		if l := c.logs[name]; len(l) > 0 {
			e := &c.Ledger[l[len(l)-1]]
			ls.Entries, ls.Last, ls.Time = len(l), describeEntry(e), e.Time
		}
		s.Logs = append(s.Logs, ls)
	}
	st := c.State()
	teams := c.Protocol.Teams()
	cmp, err := c.Compare()
	if err != nil {
		return nil, err
	}
	s.Verdict = cmp.Verdict
	verdicts := map[string]Verdict{}
	for _, e := range cmp.Summary.Entries {
		if v := verdicts[e.Observable]; v != Fail {
			verdicts[e.Observable] = Verdict(e.Verdict())
		}
	}
	needBlind := false
	seen := map[Action]bool{}
	add := func(a Action) {
		if !seen[a] {
			seen[a] = true
			s.Next = append(s.Next, a)
		}
	}
	for _, o := range c.Protocol.Observables {
		os := st.Observables[o.Name]
		ob := ObservableStatus{Name: o.Name, Title: o.Title, Round: os.Round(), Verdict: Incomplete}
		for _, t := range teams {
			ts := TeamStatus{Team: t, Published: "none"}
			if l := os.Latest[t]; l != nil {
				ts.Version = l.Version
				if p := os.Common[t]; p != nil && p.Version == l.Version {
					ts.Published = "common"
				} else if p := os.Own[t]; p != nil && p.Version == l.Version {
					ts.Published = "team"
				} else {
					needBlind = true
				}
			} else {
				add(Action{t, "seal " + o.Name})
			}
			ob.Teams = append(ob.Teams, ts)
		}
		switch {
		case c.Unblinded():
			ob.State = StateUnblinded
			ob.Verdict = verdicts[o.Name]
		case os.Open(teams):
			ob.State = StateOpen
			ob.Verdict = verdicts[o.Name]
		case os.Sealed(teams):
			ob.State = StateSealed
			needBlind = true
		default:
			ob.State = StateWaiting
		}
		s.Observables = append(s.Observables, ob)
		for _, r := range os.Revisions {
			s.Notes = append(s.Notes, revisionNote(r))
		}
	}
	if needBlind && !c.Unblinded() {
		add(Action{"custodian", "blind: publish the newly sealed tables (tandem blind " + c.Dir + custodianFlags + ")"})
	}
	s.Signoffs = c.Signoffs()
	rep := c.audit()
	s.Problems = rep.Problems
	s.Notes = append(s.Notes, rep.Notes...)
	switch {
	case c.Unblinded():
		s.State = CampaignUnblinded
		for _, rel := range c.missingFinalReports() {
			s.Notes = append(s.Notes, rel+": missing (unblind was interrupted)")
			add(Action{"custodian", "finish the final reports: tandem unblind " + c.Dir + custodianFlags})
		}
		return s, nil
	case cmp.Verdict == Incomplete:
		s.State = CampaignSealing
		for _, so := range s.Signoffs {
			if so.Stale {
				add(Action{so.Party, "sign again once every observable is open: " + staleReason(firstStale(so))})
			}
		}
		return s, nil
	}
	s.State = CampaignSigning
	ready := true
	for _, so := range s.Signoffs {
		if !slices.Contains(c.Protocol.Quorum, so.Party) && !so.Present {
			continue
		}
		switch {
		case !so.Present:
			ready = false
			add(Action{so.Party, "sign"})
		case so.Stale:
			ready = false
			add(Action{so.Party, "sign again: " + staleReason(firstStale(so))})
		case !so.Valid:
			ready = false
			add(Action{so.Party, "sign again: the present sign-off does not hold (" + so.Problems[0].String() + ")"})
		}
	}
	if len(s.Problems) > 0 {
		ready = false
	}
	if ready {
		s.State = CampaignReady
		add(Action{"custodian", "unblind: tandem unblind " + c.Dir + custodianFlags})
	}
	return s, nil
}

func firstStale(so SignoffStatus) string {
	for _, p := range so.Problems {
		if p.Kind == ProblemStale {
			return p.Message
		}
	}
	return ""
}

// staleReason shortens "sign-off of X is stale: Y after it" to "stale after Y".
func staleReason(msg string) string {
	var who, what string
	if n, _ := fmt.Sscanf(msg, "sign-off of %s is stale:", &who); n == 1 {
		if i := len("sign-off of " + who + " is stale: "); i <= len(msg) {
			what = msg[i:]
		}
	}
	if what == "" {
		return msg
	}
	if len(what) > len(" after it") && what[len(what)-len(" after it"):] == " after it" {
		return "stale after " + what[:len(what)-len(" after it")]
	}
	return "stale: " + what
}

// missingFinalReports lists the final report files not yet written.
func (c *Campaign) missingFinalReports() []string {
	var out []string
	for _, f := range reportFormats() {
		if rel := ReportPath("final", f); !c.root.Exists(rel) {
			out = append(out, rel)
		}
	}
	return out
}
