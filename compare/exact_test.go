package compare

import (
	"math"
	"math/big"
	"math/rand/v2"
	"strconv"
	"testing"

	"tandem/compare/table"
)

// The magnitude and cancellation cases of the verdict issue, each checked
// against an independent computation in exact or extended precision:
// math/big.Float at 256 bits, from the decimal strings a user writes (the
// "true" pull) and from the float64 values tandem actually reads (which
// isolates tandem's own rounding). big.Float.Sqrt is correctly rounded.

const prec = 256

func bf(s string) *big.Float {
	f, _, err := big.ParseFloat(s, 10, prec, big.ToNearestEven)
	if err != nil {
		panic(err)
	}
	return f
}

func bf64(x float64) *big.Float { return new(big.Float).SetPrec(prec).SetFloat64(x) }

func sub(x, y *big.Float) *big.Float { return new(big.Float).SetPrec(prec).Sub(x, y) }
func mul(x, y *big.Float) *big.Float { return new(big.Float).SetPrec(prec).Mul(x, y) }
func add(x, y *big.Float) *big.Float { return new(big.Float).SetPrec(prec).Add(x, y) }
func quo(x, y *big.Float) *big.Float { return new(big.Float).SetPrec(prec).Quo(x, y) }
func sqrtB(x *big.Float) *big.Float  { return new(big.Float).SetPrec(prec).Sqrt(x) }

// exactPull is d / σ_d with σ_d² = Σ_k σa_k² + σb_k² - 2ρ_k σa_k σb_k
// (textbook form, exact arithmetic), or the subset rule |Σσa² - Σσb²|.
func exactPull(a, b *big.Float, sa, sb []*big.Float, rho []*big.Float, subset bool) float64 {
	v := new(big.Float).SetPrec(prec)
	if subset {
		qa, qb := new(big.Float).SetPrec(prec), new(big.Float).SetPrec(prec)
		for k := range sa {
			qa, qb = add(qa, mul(sa[k], sa[k])), add(qb, mul(sb[k], sb[k]))
		}
		v = sub(qa, qb)
		v.Abs(v)
	} else {
		for k := range sa {
			t := add(mul(sa[k], sa[k]), mul(sb[k], sb[k]))
			t = sub(t, mul(mul(bf("2"), rho[k]), mul(sa[k], sb[k])))
			v = add(v, t)
		}
	}
	p, _ := quo(sub(a, b), sqrtB(v)).Float64()
	return p
}

// oneBin makes a one-bin table with the given columns (decimal strings).
func oneBin(src string, cols map[string]string) *table.Table {
	t := &table.Table{Source: src, Lo: []float64{0}, Hi: []float64{1}}
	for _, n := range []string{"y", "stat", "syst", "lumi", "rho"} {
		if v, ok := cols[n]; ok {
			x, err := strconv.ParseFloat(v, 64)
			if err != nil {
				panic(err)
			}
			t.Names, t.Cols = append(t.Names, n), append(t.Cols, []float64{x})
		}
	}
	return t
}

func TestMagnitudeAndCancellation(t *testing.T) {
	type side struct{ y, stat, syst string }
	for _, c := range []struct {
		name   string
		a, b   side
		rho    [2]string // stat, syst
		subset bool
		want   float64 // the true pull, worked by hand, as a cross-check
	}{
		{"tiny values and errors", side{"9e-200", "1e-200", ""}, side{"1e-200", "1e-200", ""}, [2]string{"0", "0"}, false, 8 / math.Sqrt2},
		{"huge values and errors", side{"9e200", "1e200", ""}, side{"1e200", "1e200", ""}, [2]string{"0", "0"}, false, 8 / math.Sqrt2},
		{"huge errors, tiny second source", side{"3e300", "1e300", "1e-300"}, side{"0", "1e300", "1e-300"}, [2]string{"0", "0"}, false, 3 / math.Sqrt2},
		{"rho 1, nearly equal errors", side{"1.0", "0.1", ""}, side{"1.00000001", "0.100000001", ""}, [2]string{"1", "0"}, false, -10},
		{"rho 1 and 0.999, nearly equal errors", side{"1.0", "0.1", "0.05"}, side{"1.00000001", "0.100000001", "0.05"}, [2]string{"1", "0.999"}, false, math.NaN()},
		{"subset, close errors", side{"10.0", "1.0000001", ""}, side{"10.001", "1.0", ""}, [2]string{"0", "0"}, true, -1e-3 / math.Sqrt(2.0000001e-7)},
		{"subset, tiny errors", side{"2e-250", "3e-250", ""}, side{"0", "1e-250", ""}, [2]string{"0", "0"}, true, 2 / math.Sqrt(8)},
	} {
		t.Run(c.name, func(t *testing.T) {
			cols := func(s side) map[string]string {
				m := map[string]string{"y": s.y, "stat": s.stat}
				if s.syst != "" {
					m["syst"] = s.syst
				}
				return m
			}
			ta, tb := oneBin("a.csv", cols(c.a)), oneBin("b.csv", cols(c.b))
			sel := Selection{Value: "y", Errors: []string{"stat"}}
			if c.a.syst != "" {
				sel.Errors = append(sel.Errors, "syst")
			}
			opt := Defaults()
			opt.Subset = c.subset
			if !c.subset {
				opt.Correlations = map[string]Rho{}
				for k, n := range sel.Errors {
					r, _ := ParseRho(c.rho[k])
					opt.Correlations[n] = r
				}
			}
			rs, err := Columns(ta, tb, []Selection{sel}, opt)
			if err != nil {
				t.Fatal(err)
			}
			got := rs[0].Pulls[0]
			// The campaign's entry point (Tables) gives the same pull.
			rt, err := Tables(ta, tb, []Selection{sel}, opt.EdgeTol, opt)
			if err != nil {
				t.Fatal(err)
			}
			if p := rt[0].Pulls[0]; p != got || rt[0].NDF != rs[0].NDF {
				t.Errorf("Tables: pull %v ndf %d, Columns: pull %v ndf %d", p, rt[0].NDF, got, rs[0].NDF)
			}
			// from the decimal strings: the pull a user means
			var sa, sb, rho, sa64, sb64, rho64 []*big.Float
			for k, n := range sel.Errors {
				va, vb := c.a.stat, c.b.stat
				if n == "syst" {
					va, vb = c.a.syst, c.b.syst
				}
				sa, sb, rho = append(sa, bf(va)), append(sb, bf(vb)), append(rho, bf(c.rho[k]))
				fa, _ := strconv.ParseFloat(va, 64)
				fb, _ := strconv.ParseFloat(vb, 64)
				fr, _ := strconv.ParseFloat(c.rho[k], 64)
				sa64, sb64, rho64 = append(sa64, bf64(fa)), append(sb64, bf64(fb)), append(rho64, bf64(fr))
			}
			truth := exactPull(bf(c.a.y), bf(c.b.y), sa, sb, rho, c.subset)
			ya, _ := strconv.ParseFloat(c.a.y, 64)
			yb, _ := strconv.ParseFloat(c.b.y, 64)
			exact64 := exactPull(bf64(ya), bf64(yb), sa64, sb64, rho64, c.subset)
			if !math.IsNaN(c.want) && !near(truth, c.want, 1e-9) {
				t.Fatalf("test case wrong: exact pull %v, hand-worked %v", truth, c.want)
			}
			// float64 inputs already carry 1e-16 relative error, which the
			// cancellations amplify by up to 1e8: the user's pull to 1e-6,
			// the pull of the float64 inputs to 1e-12.
			if !near(got, truth, 1e-6) {
				t.Errorf("pull %v, exact %v (from the decimal inputs)", got, truth)
			}
			if !near(got, exact64, 1e-12) {
				t.Errorf("pull %v, exact %v (from the float64 inputs)", got, exact64)
			}
			if rs[0].NDF != 1 || !rs[0].Pass && math.Abs(got) < 3 {
				t.Errorf("ndf %d, pass %v: %v", rs[0].NDF, rs[0].Pass, rs[0].Failures())
			}
		})
	}
}

// TestSharedSystematicCancels: a large systematic that both chains take from
// the same source (ρ = 1, equal sizes) cancels in a - b: the pulls equal
// d / σ_uncorrelated, worked out independently in big.Float.
func TestSharedSystematicCancels(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 11))
	const n = 50
	mk := func(src string) *table.Table {
		return &table.Table{Source: src, Lo: make([]float64, n), Hi: make([]float64, n), Names: []string{"y", "stat", "lumi", "rho"},
			Cols: [][]float64{make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)}}
	}
	a, b := mk("a"), mk("b")
	for i := 0; i < n; i++ {
		a.Lo[i], a.Hi[i], b.Lo[i], b.Hi[i] = float64(i), float64(i+1), float64(i), float64(i+1)
		truth := 1000 + 10*float64(i)
		lumi := 0.05 * truth // 5 % luminosity, 20× the statistical error
		a.Cols[1][i], b.Cols[1][i] = math.Sqrt(truth)*0.1, math.Sqrt(truth)*0.12
		a.Cols[2][i], b.Cols[2][i] = lumi, lumi
		a.Cols[0][i] = truth + a.Cols[1][i]*rng.NormFloat64()
		b.Cols[0][i] = truth + b.Cols[1][i]*rng.NormFloat64()
		a.Cols[3][i] = 0.9 * rng.Float64() // a per-bin correlation of stat
	}
	sel := Selection{Value: "y", Errors: []string{"stat", "lumi"}}
	for _, perBin := range []bool{false, true} {
		opt := Defaults()
		opt.Correlations = map[string]Rho{"lumi": Number(1), "stat": Number(0)}
		if perBin {
			opt.Correlations["stat"] = Rho{Column: "rho", Set: true}
		}
		rs, err := Columns(a, b, []Selection{sel}, opt)
		if err != nil {
			t.Fatal(err)
		}
		r := rs[0]
		for i := 0; i < n; i++ {
			rho := "0"
			if perBin {
				rho = strconv.FormatFloat(a.Cols[3][i], 'g', -1, 64)
			}
			want := exactPull(bf64(a.Cols[0][i]), bf64(b.Cols[0][i]), []*big.Float{bf64(a.Cols[1][i])}, []*big.Float{bf64(b.Cols[1][i])}, []*big.Float{bf(rho)}, false)
			if !near(r.Pulls[i], want, 1e-12) {
				t.Errorf("perBin=%v bin %d: pull %v, want d/σ_stat = %v", perBin, i, r.Pulls[i], want)
			}
		}
		if len(r.Sources) != 2 || r.Sources[1].Name != "lumi" || r.Sources[1].Share > 1e-12 || !near(r.Sources[0].Share, 1, 1e-12) {
			t.Errorf("sources %+v: the shared lumi must have no share of σ_d", r.Sources)
		}
		if perBin && r.Sources[0].PerBin != "column rho" {
			t.Errorf("per-bin source %+v", r.Sources[0])
		}
		for _, w := range r.Warnings {
			if len(w) > 11 && w[:11] == "correlation" {
				t.Errorf("declared correlations, yet warned: %s", w)
			}
		}
	}
}
