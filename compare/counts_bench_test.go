package compare

import (
	"math/rand/v2"
	"testing"
)

// BenchmarkCounts1000 times a 1000-bin counts comparison (means
// 20·e^(-2x), Poisson tables, fixed seed) with its Monte Carlo at the
// default 10⁴ samples:
//
//	go test ./compare -run '^$' -bench Counts1000 -benchmem
func BenchmarkCounts1000(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 5))
	ta, tb := countPair(rng, falling(1000, 20), 0, nil)
	opt := countsOpt()
	sel := []Selection{{Value: "n"}}
	b.ReportAllocs()
	for b.Loop() {
		rs, err := Columns(ta, tb, sel, opt)
		if err != nil {
			b.Fatal(err)
		}
		if rs[0].Counts.Samples != DefaultMCSamples {
			b.Fatalf("%d samples", rs[0].Counts.Samples)
		}
	}
}
