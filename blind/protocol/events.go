package protocol

import (
	"fmt"

	"tandem/blind"
)

// EventsObservable is the observable name in the HKDF info string of an
// event-level variable's map (see [blind.Info]). No declared observable
// can have it: brackets are not allowed in names, so the event maps never
// coincide with a binned column's map.
const EventsObservable = "[events]"

// Events is the optional [events] table of campaign.toml: settings of
// event-level synchronisation ("tandem sync --campaign").
//
//	[events]
//	blinded = [
//	  { name = "energy", scale = [0.5, 2.0], shift = [-50.0, 50.0] },
//	]
type Events struct {
	// Blinded lists the event-level variables sync compares only through
	// a map both chains' values go through.
	Blinded []EventVar `toml:"blinded"`
}

// EventVar is a blinded event-level variable: one factor s and one offset
// o, drawn from the declared ranges like a one-bin column's.
type EventVar struct {
	Name  string    `toml:"name"`
	Scale []float64 `toml:"scale"`
	Shift []float64 `toml:"shift"`
}

// MapSpec returns the variable's map: observable [EventsObservable],
// column the variable, the common scope, one bin.
func (v *EventVar) MapSpec() blind.MapSpec {
	return blind.MapSpec{
		Observable: EventsObservable, Column: v.Name, Scope: blind.CommonScope,
		Scale: blind.Range{Lo: v.Scale[0], Hi: v.Scale[1]},
		Shift: blind.Range{Lo: v.Shift[0], Hi: v.Shift[1]},
	}
}

// BlindedVars lists the blinded event-level variables (none without an
// [events] table).
func (p *Protocol) BlindedVars() []EventVar {
	if p.Events == nil {
		return nil
	}
	return p.Events.Blinded
}

func (e *Events) validate() error {
	if e == nil {
		return nil
	}
	seen := map[string]bool{}
	for i := range e.Blinded {
		v := &e.Blinded[i]
		anchor := fmt.Sprintf("name = %q", v.Name)
		where := fmt.Sprintf("events: blinded variable %q", v.Name)
		if !ValidName(v.Name) {
			return ferr("blinded", "events: blinded variable name %q must be 1-64 letters, digits, '.', '_' or '-'", v.Name)
		}
		if seen[v.Name] {
			return ferr(anchor, "%s is declared twice", where)
		}
		seen[v.Name] = true
		if len(v.Scale) != 2 {
			return ferr(anchor, "%s: scale must be a range [lo, hi] (an undeclared or single-number range makes no map)", where)
		}
		if len(v.Shift) != 2 {
			return ferr(anchor, "%s: shift must be a range [lo, hi] comparable to the values (an undeclared range makes no map)", where)
		}
		spec := v.MapSpec()
		if err := blind.CheckScale(spec.Scale); err != nil {
			return ferr(anchor, "%s: scale %v", where, err)
		}
		if err := blind.CheckShift(spec.Shift); err != nil {
			return ferr(anchor, "%s: shift %v", where, err)
		}
	}
	return nil
}
