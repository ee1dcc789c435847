package report

import (
	"fmt"
	"html"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// The fast formatters must write what fmt and the standard library write;
// strconv, fmt and html are the references.
func checkFormatters(t *testing.T, x float64) {
	t.Helper()
	if got, want := string(appendF1(nil, x)), fmt.Sprintf("%.1f", x); got != want {
		t.Errorf("appendF1(%v) = %q, fmt %%.1f writes %q", x, got, want)
	}
	if got, want := string(appendG(nil, x)), fmt.Sprintf("%g", x); got != want {
		t.Errorf("appendG(%v) = %q, fmt %%g writes %q", x, got, want)
	}
	if got, want := string(appendG6(nil, x)), strconv.FormatFloat(x, 'g', 6, 64); got != want {
		t.Errorf("appendG6(%v) = %q, strconv writes %q", x, got, want)
	}
	for p := -1; p <= 7; p++ {
		if got, want := string(appendFixed(nil, x, p)), strconv.FormatFloat(x, 'f', p, 64); got != want {
			t.Errorf("appendFixed(%v, %d) = %q, strconv writes %q", x, p, got, want)
		}
	}
}

func TestFormattersMatchFmt(t *testing.T) {
	special := []float64{0, math.Copysign(0, -1), 0.05, -0.05, 0.04999999999999999, 0.15, 0.25, 0.35, 0.45, 1.05, 2.675, -2.675,
		9.95, 99.95, 999.95, 1e8 - 0.05, 1e8, 1e8 + 0.05, 1e9, 999999999.5, 0.5, 1.5, 2.5, -2.5, 0.125, 0.0625, 1.005, 99.995, 0.0005, 123456, 999999, 1e6, -1e6, 1e21, 1e-5, 0.1 + 0.2, 1.0 / 3,
		math.NaN(), math.Inf(1), math.Inf(-1), math.MaxFloat64, math.SmallestNonzeroFloat64, 4503599627370496.5, -7.25}
	for _, x := range special {
		checkFormatters(t, x)
	}
	// every multiple of 0.05 up to 10⁵, where a tie would lie if there
	// were one, and the halves of the last place for up to four decimals
	for k := -2_000_000; k <= 2_000_000; k++ {
		x := float64(k) * 0.05
		if got, want := string(appendF1(nil, x)), strconv.FormatFloat(x, 'f', 1, 64); got != want {
			t.Fatalf("appendF1(%v) = %q, strconv writes %q", x, got, want)
		}
		if k%4 != 0 {
			continue
		}
		for p := range 5 {
			x := (float64(k/4) + 0.5) / pow10[p]
			if got, want := string(appendFixed(nil, x, p)), strconv.FormatFloat(x, 'f', p, 64); got != want {
				t.Fatalf("appendFixed(%v, %d) = %q, strconv writes %q", x, p, got, want)
			}
		}
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for range 50_000 {
		x := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(24)-8))
		checkFormatters(t, x)
		checkFormatters(t, math.Round(x))
	}
}

func TestEscapedMatchesHTML(t *testing.T) {
	for _, s := range []string{"", "plain", `<a href="x">&'</a>`, "a&&b", "\u202e<", "x'y\"z>"} {
		if got, want := string(appendEscaped(nil, s)), html.EscapeString(s); got != want {
			t.Errorf("appendEscaped(%q) = %q, html.EscapeString writes %q", s, got, want)
		}
	}
}

// FuzzFormatters holds the fast formatters to fmt and html on any input.
func FuzzFormatters(f *testing.F) {
	f.Add(0.05, "<&>")
	f.Add(-1234.25, `"'`)
	f.Fuzz(func(t *testing.T, x float64, s string) {
		checkFormatters(t, x)
		if got, want := string(appendEscaped(nil, s)), html.EscapeString(s); got != want {
			t.Errorf("appendEscaped(%q) = %q, html.EscapeString writes %q", s, got, want)
		}
	})
}

// TestDecade: decade is floor(log₁₀ x) as math.Log10 gives it, also at
// and next to the powers of ten.
func TestDecade(t *testing.T) {
	var xs []float64
	for k := -8; k <= 9; k++ {
		p := math.Pow(10, float64(k))
		xs = append(xs, p, math.Nextafter(p, 0), math.Nextafter(p, 2*p), 2*p, 5*p, 9.999*p, p*(1+1e-12), p*(1-1e-12))
	}
	rng := rand.New(rand.NewPCG(3, 3))
	for range 100_000 {
		xs = append(xs, math.Pow(10, rng.Float64()*16-7))
	}
	for _, x := range xs {
		if got, want := decade(x), int(math.Floor(math.Log10(x))); got != want {
			t.Errorf("decade(%v) = %d, math.Log10 gives %d", x, got, want)
		}
	}
}

// TestLogTicksInfiniteEdge: a log axis up to an infinite edge (bins that
// double 1100 times overflow) has no ticks; it used to loop for ever.
func TestLogTicksInfiniteEdge(t *testing.T) {
	if got := ticks(1e-3, math.Inf(1), true); got != nil {
		t.Errorf("ticks up to +Inf = %v, want none", got)
	}
	if got := ticks(1, 1e4, true); len(got) != 5 {
		t.Errorf("ticks over four decades = %v, want 1, 10, 100, 1000, 10000", got)
	}
}
