package table

import (
	"bufio"
	"encoding/binary"
	"math"
	"math/big"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// plainRE is the strict number grammar, written independently of the
// parser as the test's reference.
var plainRE = regexp.MustCompile(`^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?$`)

// reference is what parseNumber must do, from strconv.ParseFloat (the
// correctly rounded reference of the Go standard library) and the strict
// rules: plain grammar, finite, and normal unless every digit is zero.
func reference(s string) (float64, bool) {
	if !plainRE.MatchString(s) {
		return 0, false
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, false
	}
	if math.Abs(v) < smallestNormal {
		mant := s
		if i := strings.IndexAny(s, "eE"); i >= 0 {
			mant = s[:i]
		}
		if strings.Trim(mant, "+-0.") != "" {
			return 0, false // underflow to zero or to a subnormal
		}
	}
	return v, true
}

func checkNumber(t *testing.T, s string) {
	t.Helper()
	want, wok := reference(s)
	got, msg := parseNumber([]byte(s))
	switch {
	case wok != (msg == ""):
		t.Fatalf("parseNumber(%q) = %v, %q; reference accepts: %v (%v)", s, got, msg, wok, want)
	case wok && math.Float64bits(got) != math.Float64bits(want):
		t.Fatalf("parseNumber(%q) = %v (%#x), strconv %v (%#x)", s, got, math.Float64bits(got), want, math.Float64bits(want))
	}
	if v, end, ok := scanField([]byte(s+",x"), 0, ','); ok {
		if !wok || end != len(s) || math.Float64bits(v) != math.Float64bits(want) {
			t.Fatalf("scanField(%q) = %v at %d; reference %v, %v", s, v, end, want, wok)
		}
	}
}

func numberSeeds(tb testing.TB) []string {
	paths, _ := filepath.Glob("testdata/seeds/numbers*.txt")
	if len(paths) == 0 {
		tb.Fatal("no number seeds in testdata/seeds")
	}
	var out []string
	for _, p := range paths {
		f, err := os.Open(p)
		if err != nil {
			tb.Fatal(err)
		}
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			out = append(out, sc.Text())
		}
		f.Close()
	}
	return out
}

// FuzzParseNumber: the strict parser and its fast paths accept exactly what
// the reference accepts, with the very same float64.
func FuzzParseNumber(f *testing.F) {
	for _, s := range numberSeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		if s == "" || strings.ContainsRune(s, ',') {
			return
		}
		checkNumber(t, s)
	})
}

func TestNumberSeeds(t *testing.T) {
	for _, s := range numberSeeds(t) {
		checkNumber(t, s)
	}
}

// TestNumberStyles parses random doubles written in the styles of common
// writers (C printf "%.6g", "%.17g", shortest round trip, numpy's default
// "%.18e", fixed "%.6f") against strconv, over the whole normal range.
func TestNumberStyles(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	styles := []func(float64) string{
		func(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) },
		func(v float64) string { return strconv.FormatFloat(v, 'g', 17, 64) },
		func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) },
		func(v float64) string { return strconv.FormatFloat(v, 'e', 18, 64) },
		func(v float64) string { return strconv.FormatFloat(v, 'f', 6, 64) },
	}
	for n := 0; n < 100000; n++ {
		var v float64
		switch n % 3 {
		case 0: // any normal double
			v = math.Float64frombits(rng.Uint64() &^ (1 << 63))
			if math.IsInf(v, 0) || math.IsNaN(v) || v < smallestNormal {
				continue
			}
		case 1: // values of physics tables
			v = math.Pow(10, rng.Float64()*20-10)
		default:
			v = float64(rng.IntN(1_000_000)) * 0.001
		}
		if rng.IntN(4) == 0 {
			v = -v
		}
		for _, st := range styles {
			checkNumber(t, st(v))
		}
	}
}

// TestEiselLemireDecides: on random 19-digit mantissas the fast path
// answers nearly always, and is right whenever it answers.
func TestEiselLemireDecides(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	const n = 200000
	gaveUp := 0
	for i := 0; i < n; i++ {
		m := rng.Uint64N(9e18) + 1e18
		q := rng.IntN(600) - 320
		v, ok := eiselLemire(m, q, false)
		s := strconv.FormatUint(m, 10) + "e" + strconv.Itoa(q)
		want, err := strconv.ParseFloat(s, 64)
		if !ok {
			gaveUp++
			continue
		}
		if err != nil || v != want {
			t.Fatalf("eiselLemire(%s) = %v, strconv %v (%v)", s, v, want, err)
		}
	}
	if gaveUp > n/100 {
		t.Errorf("the fast path gave up on %d of %d numbers", gaveUp, n)
	}
}

// TestPow5Table checks every entry against exact rational arithmetic:
// T·2^e <= 5^q < (T+1)·2^e with 2¹²⁷ <= T < 2¹²⁸.
func TestPow5Table(t *testing.T) {
	lo := new(big.Int).Lsh(big.NewInt(1), 127)
	hi := new(big.Int).Lsh(big.NewInt(1), 128)
	for q := minPow5; q <= maxPow5; q++ {
		i := q - minPow5
		T := new(big.Int).SetUint64(pow5Hi[i])
		T.Lsh(T, 64).Or(T, new(big.Int).SetUint64(pow5Lo[i]))
		if T.Cmp(lo) < 0 || T.Cmp(hi) >= 0 {
			t.Fatalf("q=%d: T not normalised", q)
		}
		p := new(big.Rat).SetInt(new(big.Int).Exp(big.NewInt(5), big.NewInt(int64(abs(q))), nil))
		if q < 0 {
			p.Inv(p)
		}
		scale := new(big.Rat).SetInt(new(big.Int).Lsh(big.NewInt(1), uint(abs(int(pow5Exp[i])))))
		if pow5Exp[i] < 0 {
			scale.Inv(scale)
		}
		low := new(big.Rat).Mul(new(big.Rat).SetInt(T), scale)
		high := new(big.Rat).Mul(new(big.Rat).SetInt(new(big.Int).Add(T, big.NewInt(1))), scale)
		if low.Cmp(p) > 0 || high.Cmp(p) <= 0 {
			t.Fatalf("q=%d: 5^q outside [T, T+1)·2^e", q)
		}
	}
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// TestStrictNumbers: what the strict grammar refuses, and why.
func TestStrictNumbers(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"0x1p3", "not hexadecimal"},
		{"1_000", "digit separators"},
		{"inf", "NaN and infinities"},
		{"+Inf", "NaN and infinities"},
		{"nan", "NaN and infinities"},
		{"1e-999", `"1e-999" underflows to zero`},
		{"5e-324", "below the smallest normal"},
		{"2.2250738585072009e-308", "below the smallest normal"},
		{"1e999", "out of range"},
		{"1.7976931348623159e308", "out of range"},
		{"1e", "cannot parse"},
		{"--1", "cannot parse"},
	} {
		_, msg := parseNumber([]byte(c.in))
		if !strings.Contains(msg, c.want) {
			t.Errorf("%q: got %q, want %q", c.in, msg, c.want)
		}
	}
	for _, s := range []string{"0", "0.0", "-0", "0e5", "0e-99999", "000.000e+7", "2.2250738585072014e-308", "1.7976931348623157e308"} {
		if _, msg := parseNumber([]byte(s)); msg != "" {
			t.Errorf("%q refused: %s", s, msg)
		}
	}
}

// TestEightDigits checks the word-at-a-time digit test and value against a
// byte-by-byte loop: every byte value in every position of an 8-byte word,
// and random digit strings.
func TestEightDigits(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	for n := 0; n < 300000; n++ {
		var b [8]byte
		for k := range b {
			b[k] = '0' + byte(rng.IntN(10))
		}
		if n < 8*256 {
			b[n/256] = byte(n % 256)
		} else if n%3 == 0 {
			b[rng.IntN(8)] = byte(rng.IntN(256))
		}
		w := binary.LittleEndian.Uint64(b[:])
		all, v := true, uint64(0)
		for _, c := range b {
			if c < '0' || c > '9' {
				all = false
			}
			v = v*10 + uint64(c-'0')
		}
		if eightDigits(w) != all {
			t.Fatalf("eightDigits(%q) = %v", b[:], !all)
		}
		if all && eightDigitsValue(w) != v {
			t.Fatalf("eightDigitsValue(%q) = %d, want %d", b[:], eightDigitsValue(w), v)
		}
	}
}
