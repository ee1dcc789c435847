package table

import (
	"encoding/binary"
	"math"
	"math/big"
	"math/bits"
	"strconv"
	"unsafe"
)

// Numbers in tables are plain decimals with an optional exponent:
//
//	[+-] digits [. digits] [(e|E) [+-] digits]     (".5" and "5." too)
//
// Hexadecimal, digit separators ("1_000"), NaN and infinities are refused,
// and so is a number whose magnitude overflows the float64 range or falls
// below the smallest normal float64 (2.2250738585072014e-308), unless every
// digit is zero. Every accepted number is the correctly rounded float64,
// the value strconv.ParseFloat returns.
//
// Three converters run in turn, each exact where it answers:
//
//  1. Clinger's fast path (W. D. Clinger, "How to read floating point
//     numbers accurately", PLDI 1990): a mantissa below 2⁵³ times or divided
//     by an exact power of ten up to 10²² is one correctly rounded operation.
//  2. The Eisel–Lemire method (D. Lemire, "Number parsing at a gigabyte per
//     second", Software: Practice and Experience 51(8), 2021): up to 19
//     significant digits times a 128-bit truncated power of five, with an
//     interval check that gives up whenever the rounding is not decided.
//  3. strconv.ParseFloat, for everything the first two leave.

// smallestNormal is the smallest positive normal float64, 2⁻¹⁰²².
const smallestNormal = 0x1p-1022

// pow10 holds the exactly representable powers of ten.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
	1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// The power-of-five table covers the decimal exponents for which a 19-digit
// mantissa can give a finite, non-zero float64.
const (
	minPow5 = -342
	maxPow5 = 308
)

// pow5Hi, pow5Lo and pow5Exp describe 5^q for minPow5 <= q <= maxPow5 as
// T·2^e with T = pow5Hi·2⁶⁴ + pow5Lo in [2¹²⁷, 2¹²⁸) and T = floor(5^q / 2^e):
// the true power is in [T, T+1)·2^e.
var pow5Hi, pow5Lo, pow5Exp = makePow5()

func makePow5() (hi, lo []uint64, exp []int32) {
	n := maxPow5 - minPow5 + 1
	hi, lo, exp = make([]uint64, n), make([]uint64, n), make([]int32, n)
	five := big.NewInt(5)
	p := big.NewInt(1) // 5^|q|
	mask := new(big.Int).SetUint64(math.MaxUint64)
	var t, w big.Int
	set := func(q int, e int) {
		i := q - minPow5
		hi[i] = new(big.Int).Rsh(&t, 64).Uint64()
		lo[i] = w.And(&t, mask).Uint64()
		exp[i] = int32(e)
	}
	for q := 0; q <= -minPow5; q++ {
		nb := p.BitLen()
		if q <= maxPow5 {
			// T = floor(5^q · 2^(128-nb)), e = nb - 128.
			if nb <= 128 {
				t.Lsh(p, uint(128-nb))
			} else {
				t.Rsh(p, uint(nb-128))
			}
			set(q, nb-128)
		}
		if q > 0 {
			// 5^-q = 2^k / 5^q · 2^-k with k = nb + 127, so that
			// T = floor(2^k / 5^q) lies in (2¹²⁷, 2¹²⁸).
			k := nb + 127
			t.Lsh(big.NewInt(1), uint(k))
			t.Quo(&t, p)
			set(-q, -k)
		}
		p.Mul(p, five)
	}
	return hi, lo, exp
}

// eiselLemire returns the float64 nearest to m·10^q (m > 0, at most 19
// digits) when it is a normal number and the 128-bit product decides the
// rounding; ok is false otherwise, and the caller asks strconv.
func eiselLemire(m uint64, q int, neg bool) (float64, bool) {
	if q < minPow5 || q > maxPow5 || m == 0 {
		return 0, false
	}
	i := q - minPow5
	l := bits.LeadingZeros64(m)
	w := m << uint(l)
	// P = w·5^q/2^e lies in [w·T, w·T + w). First w·Thi: the product
	// w·T is at least (h1, h0)·2⁶⁴ and floor(P/2⁶⁴) at most (h1, h0) + w.
	h1, h0 := bits.Mul64(w, pow5Hi[i])
	// The common case, decided by the first product alone (roundTop,
	// written out): a carry from the slack into h1 leaves the top bits
	// alone unless the bits below them are all ones, and the value is not
	// possibly halfway.
	shift := 9 + h1>>63
	top, low := h1>>shift, h1&(1<<shift-1)
	decided := (h0+w >= h0 || low != 1<<shift-1) && (top&1 == 0 || low != 0 || h0 != 0)
	if !decided {
		top, decided = roundTop(h1, h0, w, false)
	}
	if !decided {
		// Then the full 192-bit product: P in [Q, Q + w - 1] with
		// Q = (h1, h0, 0) + (0, g1, g0).
		g1, g0 := bits.Mul64(w, pow5Lo[i])
		mid, c := bits.Add64(h0, g1, 0)
		h1 += c
		// Upper bound: Q + w - 1; its carry into the middle word.
		_, c0 := bits.Add64(g0, w-1, 0)
		_, c1 := bits.Add64(mid, 0, c0)
		hiUp := h1 + c1
		if hiUp != h1 && !sameTop(h1, hiUp) {
			return 0, false
		}
		top, decided = roundTop(h1, mid, 0, g0 != 0)
		if !decided {
			return 0, false
		}
	}
	// top holds 54 bits: the 53 of the result and the rounding bit, which
	// roundTop has shown is not a tie. shift is where they sat in h1.
	shift = 9 + h1>>63
	mant := (top + 1) >> 1
	e2 := 128 + int(shift) + 1 + int(pow5Exp[i]) + q - l
	biased := e2 + 52 + 1023
	if biased < 1 {
		return 0, false // subnormal range: rounded at another precision
	}
	if mant == 1<<53 {
		mant >>= 1
		biased++
	}
	if biased > 2046 {
		return 0, false
	}
	b := uint64(biased)<<52 | mant&(1<<52-1)
	if neg {
		b |= 1 << 63
	}
	return math.Float64frombits(b), true
}

// sameTop reports whether a and b agree in the 54 bits that start at the
// leading bit of a (a has its leading bit at 63 or 62).
func sameTop(a, b uint64) bool {
	shift := 9 + a>>63
	return a>>shift == b>>shift
}

// roundTop checks that every value of the 128-bit range [(hi, lo),
// (hi, lo) + slack] rounds alike to 53 bits (sticky: bits below lo are
// known to be non-zero) and returns the top 54 bits of hi.
func roundTop(hi, lo, slack uint64, sticky bool) (uint64, bool) {
	shift := 9 + hi>>63
	if slack != 0 {
		if _, c := bits.Add64(lo, slack, 0); c != 0 && !sameTop(hi, hi+1) {
			return 0, false
		}
	}
	top := hi >> shift
	if top&1 == 1 && hi&(1<<shift-1) == 0 && lo == 0 && !sticky {
		return 0, false // possibly exactly halfway
	}
	return top, true
}

// convert turns the decimal m·10^q (m with at most 19 digits) into a
// float64 through the fast paths; ok is false when they cannot answer (and
// for results that would be out of range or not normal).
func convert(m uint64, q int, neg bool) (float64, bool) {
	if m == 0 {
		if neg {
			return math.Copysign(0, -1), true
		}
		return 0, true
	}
	if m < 1<<53 && q >= -22 && q <= 22 {
		v := float64(m)
		if q >= 0 {
			v *= pow10[q]
		} else {
			v /= pow10[-q]
		}
		if neg {
			v = -v
		}
		return v, true
	}
	return eiselLemire(m, q, neg)
}

// maxExp caps the exponent digits that are read: anything beyond is far
// outside the float64 range either way.
const maxExp = 1 << 20

// scanField parses the number at line[pos:] that ends at the delimiter or
// at the end of the line, when it has at most 19 digits (leading zeros
// counted) and the fast paths decide it. It returns the value and the
// position of the delimiter (or len(line)); ok false sends the field to
// [parseNumber], which handles and explains everything else.
func scanField(line []byte, pos int, delim byte) (v float64, end int, ok bool) {
	i, neg := pos, false
	if i < len(line) {
		switch line[i] {
		case '-':
			neg, i = true, i+1
		case '+':
			i++
		}
	}
	// Leading zeros ("0.000123") are skipped and not counted; m may wrap
	// on more than 19 other digits, which the count check rejects.
	var m uint64
	start := i
	for i < len(line) && line[i] == '0' {
		i++
	}
	zeros := i - start
	m, i = digitRun(line, i, m)
	seen := i > start
	digits, frac := i-start-zeros, 0
	if i < len(line) && line[i] == '.' {
		i++
		fstart := i
		if m == 0 {
			for i < len(line) && line[i] == '0' {
				i++
			}
		}
		fzeros := i - fstart
		m, i = digitRun(line, i, m)
		frac = i - fstart
		digits += frac - fzeros
		seen = seen || frac > 0
	}
	if !seen || digits > 19 {
		return 0, 0, false
	}
	q := -frac
	if i < len(line) && line[i]|0x20 == 'e' {
		i++
		eneg := false
		if i < len(line) {
			switch line[i] {
			case '-':
				eneg, i = true, i+1
			case '+':
				i++
			}
		}
		estart, e := i, 0
		for i < len(line) && line[i]-'0' <= 9 {
			if e < maxExp {
				e = e*10 + int(line[i]-'0')
			}
			i++
		}
		if i == estart {
			return 0, 0, false
		}
		if eneg {
			e = -e
		}
		q += e
	}
	if i < len(line) && line[i] != delim {
		return 0, 0, false
	}
	// Clinger's fast path, written out here because it is the common
	// case and a call costs as much as the arithmetic.
	if m < 1<<53 && q >= -22 && q <= 22 {
		v = float64(m)
		if q >= 0 {
			v *= pow10[q]
		} else {
			v /= pow10[-q]
		}
		if neg {
			v = -v
		}
		return v, i, true
	}
	if m == 0 {
		v, ok = convert(m, q, neg)
		return v, i, ok
	}
	v, ok = eiselLemire(m, q, neg)
	return v, i, ok
}

// decimal is a number split by [splitDecimal]: the first 19 significant
// digits m, the decimal exponent q of m's last digit, and whether non-zero
// digits were cut off after those 19.
type decimal struct {
	m     uint64
	q     int
	neg   bool
	cut   bool
	zero  bool // every digit is zero
	digit bool // at least one mantissa digit
}

// splitDecimal checks the strict grammar and splits f; ok is false when f
// is not a plain decimal.
func splitDecimal(f []byte) (d decimal, ok bool) {
	i := 0
	if i < len(f) && (f[i] == '-' || f[i] == '+') {
		d.neg = f[i] == '-'
		i++
	}
	nd, dot, dropped := 0, false, 0
	d.zero = true
	for ; i < len(f); i++ {
		c := f[i]
		switch {
		case c >= '0' && c <= '9':
			d.digit = true
			if c != '0' {
				d.zero = false
			}
			if nd == 0 && c == '0' {
				if dot {
					d.q--
				}
				continue
			}
			if nd < 19 {
				d.m = d.m*10 + uint64(c-'0')
				nd++
				if dot {
					d.q--
				}
			} else {
				if c != '0' {
					d.cut = true
				}
				if !dot {
					dropped++
				}
			}
			continue
		case c == '.' && !dot:
			dot = true
			continue
		}
		break
	}
	if !d.digit {
		return d, false
	}
	d.q += dropped
	if i < len(f) && (f[i] == 'e' || f[i] == 'E') {
		i++
		eneg := false
		if i < len(f) && (f[i] == '-' || f[i] == '+') {
			eneg = f[i] == '-'
			i++
		}
		estart, e := i, 0
		for ; i < len(f) && f[i] >= '0' && f[i] <= '9'; i++ {
			if e < maxExp {
				e = e*10 + int(f[i]-'0')
			}
		}
		if i == estart {
			return d, false
		}
		if eneg {
			e = -e
		}
		d.q += e
	}
	return d, i == len(f)
}

// ParseNumber parses one field as a finite float64 under the strict grammar
// above: the correctly rounded value, or the reason it is refused.
func ParseNumber(f []byte) (float64, string) { return parseNumber(f) }

// parseNumber parses a finite float64 under the strict grammar, returning a
// reason on failure.
func parseNumber(f []byte) (float64, string) {
	if len(f) == 0 {
		return 0, "empty field, expected a number"
	}
	if v, end, ok := scanField(f, 0, 0); ok && end == len(f) {
		return v, ""
	}
	d, ok := splitDecimal(f)
	if !ok {
		return 0, notPlain(f)
	}
	if d.zero {
		if d.neg {
			return math.Copysign(0, -1), ""
		}
		return 0, ""
	}
	// With digits cut off, the value lies strictly between m and m+1
	// units of the last kept digit; when both ends convert alike, so does
	// every value between them.
	v, ok := convert(d.m, d.q, d.neg)
	if ok && d.cut {
		w, wok := convert(d.m+1, d.q, d.neg)
		ok = wok && w == v
	}
	if ok {
		return v, ""
	}
	// The string shares f's memory only for the duration of ParseFloat,
	// which does not retain it; this avoids one allocation per field.
	v, err := strconv.ParseFloat(unsafe.String(&f[0], len(f)), 64)
	switch {
	case err != nil || math.IsInf(v, 0):
		return 0, "number " + strconv.Quote(string(f)) + " is out of range (beyond ±1.7976931348623157e308)"
	case v == 0:
		return 0, "number " + strconv.Quote(string(f)) + " underflows to zero (smallest normal magnitude 2.2250738585072014e-308)"
	case math.Abs(v) < smallestNormal:
		return 0, "number " + strconv.Quote(string(f)) + " is below the smallest normal magnitude 2.2250738585072014e-308"
	}
	return v, ""
}

// notPlain explains why f is not a plain decimal.
func notPlain(f []byte) string {
	s := string(f)
	low := []byte(s)
	for i, c := range low {
		if c >= 'A' && c <= 'Z' {
			low[i] = c + 'a' - 'A'
		}
	}
	body := string(low)
	if len(body) > 0 && (body[0] == '+' || body[0] == '-') {
		body = body[1:]
	}
	switch body {
	case "nan", "inf", "infinity":
		return "NaN and infinities are not allowed (" + s + ")"
	}
	msg := "cannot parse " + strconv.Quote(s) + " as a number"
	switch {
	case len(body) > 1 && body[0] == '0' && (body[1] == 'x' || body[1] == 'b' || body[1] == 'o'):
		return msg + ": only plain decimal and exponent notation (12.5, 1.25e1) is allowed, not hexadecimal, binary or octal"
	case bytesContains(low, '_'):
		return msg + ": digit separators '_' are not allowed"
	}
	return msg
}

func bytesContains(b []byte, c byte) bool {
	for _, x := range b {
		if x == c {
			return true
		}
	}
	return false
}

// digitRun reads the digits at line[i:] into m (m·10 + digit each) and
// returns m and the position after them, eight digits per step while a
// word holds eight. m wraps on more than 19 digits, which the callers'
// digit count rejects.
func digitRun(line []byte, i int, m uint64) (uint64, int) {
	for i+8 <= len(line) {
		w := binary.LittleEndian.Uint64(line[i:])
		if !eightDigits(w) {
			break
		}
		m = m*100_000_000 + eightDigitsValue(w)
		i += 8
	}
	for i < len(line) && line[i]-'0' <= 9 {
		m = m*10 + uint64(line[i]-'0')
		i++
	}
	return m, i
}

// eightDigits reports whether the eight bytes of w (read little-endian)
// are all ASCII digits: each byte must have the high nibble 3, and adding 6
// must not carry it past 3 (which it does for ':' through '?'). Testing
// and converting eight digits per word is common practice in fast decimal
// parsers; it takes about a tenth off the time of a 17–19 digit field.
func eightDigits(w uint64) bool {
	return (w&0xF0F0F0F0F0F0F0F0)|(((w+0x0606060606060606)&0xF0F0F0F0F0F0F0F0)>>4) == 0x3333333333333333
}

// eightDigitsValue is the number written by the eight ASCII digits in w,
// the first digit in the lowest byte, in three multiply steps: adjacent
// digits into pairs, pairs into fours, fours into the eight-digit value.
// eightDigits must hold.
func eightDigitsValue(w uint64) uint64 {
	w -= 0x3030303030303030
	w = w*10 + w>>8 // byte 2k: digit 2k·10 + digit 2k+1
	const mask = 0x000000FF000000FF
	const mul1 = 100 + 1_000_000<<32
	const mul2 = 1 + 10_000<<32
	return ((w&mask)*mul1 + (w>>16&mask)*mul2) >> 32
}
