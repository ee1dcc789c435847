package protocol

import (
	"tandem/compare/fuzzseed"
	"testing"
)

func FuzzProtocol(f *testing.F) {
	for _, b := range fuzzseed.Load(f, "*.toml") {
		f.Add(b)
	}
	f.Add([]byte(Template("x", "", "")))
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := Parse("fuzz.toml", data)
		if err != nil {
			return
		}
		if len(p.Teams()) < 2 || len(p.Quorum) == 0 || p.CustodianPublicKey() == nil {
			t.Fatalf("accepted an impossible protocol")
		}
		// Every accepted observable can be held by one table: its edges,
		// value and uncertainty columns are distinct names.
		for _, o := range p.Observables {
			seen := map[string]bool{o.Edges[0]: true, o.Edges[1]: true}
			if o.Edges[0] == o.Edges[1] {
				t.Fatalf("observable %q: edges alike", o.Name)
			}
			for _, c := range o.Columns {
				for _, n := range append([]string{c.Name}, c.Errors...) {
					if seen[n] {
						t.Fatalf("observable %q: accepted the name %q twice in its table", o.Name, n)
					}
					seen[n] = true
				}
			}
			for _, x := range o.Extra {
				if x == o.Edges[0] || x == o.Edges[1] || o.Column(x) != nil {
					t.Fatalf("observable %q: accepted the per-bin correlation column %q, an edge or a value", o.Name, x)
				}
			}
		}
	})
}
