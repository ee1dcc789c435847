package report

import (
	"bytes"
	"io"
	"math"
	"strconv"
	"strings"
)

// page is the buffer the renderers append to: the figures of a large
// campaign are millions of coordinates and its tables hundreds of
// thousands of cells, and formatting each through fmt costs more than
// everything else together. The methods return the page
// so that an element reads as one chain.
type page struct {
	b []byte
	w io.Writer
	// buf is w when it is a bytes.Buffer: then the page is built in the
	// buffer's own spare room, and passed on once at the end, with no copy.
	buf *bytes.Buffer
	// err is the first write error; later writes are dropped.
	err error
	// scratch is a reusable buffer for a path drawn while its elements
	// are written.
	scratch []byte
	// curves holds the normal curves of the pull histograms drawn so far.
	curves map[curveKey]*curve
	// axes holds the axes drawn so far; axisTmp is the buffer an axis is
	// drawn in.
	axes    map[axisKey]*axis
	axisTmp []byte
}

// flushAt is the buffered size at which [page.maybeFlush] passes the
// page on to its writer.
const flushAt = 1 << 18

// newPage starts a page for w, expected to grow to about size bytes.
func newPage(w io.Writer, size int) *page {
	p := &page{w: w}
	if bb, ok := w.(*bytes.Buffer); ok {
		bb.Grow(size)
		p.buf, p.b = bb, bb.AvailableBuffer()
		return p
	}
	p.b = make([]byte, 0, min(size, flushAt+flushAt/2))
	return p
}

// s appends x as it is.
func (p *page) s(x string) *page {
	p.set(append(p.b, x...))
	return p
}

// set makes b, which extends p.b, the page's contents. While b has the
// same room it has the same array, and only the length is stored: storing
// the array's pointer on every append would cost a write barrier each
// while the garbage collector marks, which at a page's rate of appends
// took a sixth of the time.
func (p *page) set(b []byte) {
	if cap(b) == cap(p.b) {
		p.b = p.b[:len(b)]
		return
	}
	p.b = b
}

// raw appends the bytes of x.
func (p *page) raw(x []byte) *page {
	p.set(append(p.b, x...))
	return p
}

// e appends x escaped for HTML text and attributes, as
// [html.EscapeString] does.
func (p *page) e(x string) *page {
	p.set(appendEscaped(p.b, x))
	return p
}

// et appends x escaped as [page.e] does, with σ_d (the uncertainty of the
// difference) written with a real subscript: σ<sub>d</sub> in HTML, or a
// lowered tspan inside SVG text when svg is set.
func (p *page) et(x string, svg bool) *page {
	for {
		before, after, ok := strings.Cut(x, "σ_d")
		if !ok {
			return p.e(x)
		}
		p.e(before)
		if svg {
			p.s(`σ<tspan baseline-shift="sub" font-size="75%">d</tspan>`)
		} else {
			p.s("σ<sub>d</sub>")
		}
		x = after
	}
}

// f1 appends x as fmt's %.1f writes it.
func (p *page) f1(x float64) *page {
	p.set(appendF1(p.b, x))
	return p
}

// g appends x as fmt's %g writes it.
func (p *page) g(x float64) *page {
	p.set(appendG(p.b, x))
	return p
}

// spaces appends n spaces.
func (p *page) spaces(n int) *page {
	const blank = "                                                                "
	for n > len(blank) {
		p.b = append(p.b, blank...)
		n -= len(blank)
	}
	if n > 0 {
		p.b = append(p.b, blank[:n]...)
	}
	return p
}

// d appends an integer.
func (p *page) d(n int) *page {
	p.set(strconv.AppendInt(p.b, int64(n), 10))
	return p
}

// nums appends tmpl with each '%' in it replaced by the next of xs as
// %.1f writes it: the shape of an SVG element with its coordinates.
func (p *page) nums(tmpl string, xs ...float64) *page {
	for _, x := range xs {
		i := strings.IndexByte(tmpl, '%')
		if i < 0 {
			break
		}
		p.set(appendF1(append(p.b, tmpl[:i]...), x))
		tmpl = tmpl[i+1:]
	}
	p.set(append(p.b, tmpl...))
	return p
}

// Write appends b, so that fmt can print to the page.
func (p *page) Write(b []byte) (int, error) {
	p.b = append(p.b, b...)
	return len(b), nil
}

// maybeFlush writes the page out once it is large.
func (p *page) maybeFlush() {
	if p.buf == nil && len(p.b) >= flushAt {
		p.flush()
	}
}

// flush writes the page out and empties it.
func (p *page) flush() error {
	if p.err == nil && len(p.b) > 0 {
		_, p.err = p.w.Write(p.b)
	}
	if p.buf != nil {
		p.b = p.buf.AvailableBuffer()
	} else {
		p.b = p.b[:0]
	}
	return p.err
}

// appendF1 appends x with one decimal, exactly as strconv.AppendFloat(b,
// x, 'f', 1, 64) (and so fmt's %.1f) does.
// It is appendFixed for one decimal, with the digits of the coordinates
// of a figure (below 10⁴) written directly.
func appendF1(b []byte, x float64) []byte {
	neg := math.Signbit(x)
	t := x * 10
	if neg {
		t = -t
	}
	if !(t < 1e9) {
		return strconv.AppendFloat(b, x, 'f', 1, 64)
	}
	n := uint64(t)
	switch fr := t - float64(n); {
	case fr > 0.5-1e-6 && fr < 0.5+1e-6:
		return strconv.AppendFloat(b, x, 'f', 1, 64)
	case fr > 0.5:
		n++
	}
	if neg {
		b = append(b, '-')
	}
	q, r := n/10, byte('0'+n%10)
	switch {
	case q < 10:
		return append(b, byte('0'+q), '.', r)
	case q < 100:
		return append(b, byte('0'+q/10), byte('0'+q%10), '.', r)
	case q < 1000:
		return append(b, byte('0'+q/100), byte('0'+q/10%10), byte('0'+q%10), '.', r)
	}
	return append(strconv.AppendUint(b, q, 10), '.', r)
}

// pow10 are the powers of ten appendFixed works with, all exact.
var pow10 = [...]float64{1, 10, 100, 1000, 1e4, 1e5, 1e6}

// appendFixed appends x with the given number of decimals, exactly as
// strconv.AppendFloat(b, x, 'f', places, 64) does. When x·10^places is
// below 10⁹ it rounds that product to an integer itself. With decimals, a
// decimal tie cannot occur (x = (2k+1)/(2·10^places) has a factor 5 in its
// denominator, no float64 has), the product is off by at most
// 10⁹·2⁻⁵³ ≈ 1.1·10⁻⁷, and when it lies within 10⁻⁶ of a half, where that
// error could matter, strconv decides. Without decimals the product is x
// itself, exact, and a tie goes to the even integer as strconv rounds it.
func appendFixed(b []byte, x float64, places int) []byte {
	if uint(places) >= uint(len(pow10)) {
		return strconv.AppendFloat(b, x, 'f', places, 64)
	}
	neg := math.Signbit(x)
	t := x * pow10[places]
	if neg {
		t = -t
	}
	if !(t < 1e9) {
		return strconv.AppendFloat(b, x, 'f', places, 64)
	}
	var n uint64
	if places == 0 {
		n = uint64(math.RoundToEven(t))
	} else {
		n = uint64(t)
		switch fr := t - float64(n); {
		case fr > 0.5-1e-6 && fr < 0.5+1e-6:
			return strconv.AppendFloat(b, x, 'f', places, 64)
		case fr > 0.5:
			n++
		}
	}
	var d [24]byte
	i := len(d)
	for range places {
		i--
		d[i] = byte('0' + n%10)
		n /= 10
	}
	if places > 0 {
		i--
		d[i] = '.'
	}
	for {
		i--
		d[i] = byte('0' + n%10)
		n /= 10
		if n == 0 {
			break
		}
	}
	if neg {
		i--
		d[i] = '-'
	}
	return append(b, d[i:]...)
}

// appendG6 appends x with six significant digits, as
// strconv.AppendFloat(b, x, 'g', 6, 64) does; integers below 10⁶ (which
// it writes as integers) take a short cut.
func appendG6(b []byte, x float64) []byte {
	if x == math.Trunc(x) && math.Abs(x) < 1e6 && !(x == 0 && math.Signbit(x)) {
		return strconv.AppendInt(b, int64(x), 10)
	}
	return strconv.AppendFloat(b, x, 'g', 6, 64)
}

// noNegZero drops the minus sign of a number written from start on when
// every digit of its mantissa is 0 ("-0", "-0.00", "-0.0e+00"): a value
// that rounds to zero is shown as zero in the reports people read.
func noNegZero(b []byte, start int) []byte {
	if !negZero(b[start:]) {
		return b
	}
	return append(b[:start], b[start+1:]...)
}

// negZero reports whether the number x starts with a minus sign and every
// digit of its mantissa is 0.
func negZero(x []byte) bool {
	if len(x) == 0 || x[0] != '-' {
		return false
	}
	for _, c := range x[1:] {
		if c == 'e' || c == 'E' {
			break
		}
		if c != '0' && c != '.' {
			return false
		}
	}
	return true
}

// appendG appends x in the shortest form, as strconv.AppendFloat(b, x,
// 'g', -1, 64) (and so fmt's %g) does; integers below 10⁶ (which 'g'
// writes as integers) take a short cut.
func appendG(b []byte, x float64) []byte {
	if x == math.Trunc(x) && math.Abs(x) < 1e6 && !(x == 0 && math.Signbit(x)) {
		return strconv.AppendInt(b, int64(x), 10)
	}
	return strconv.AppendFloat(b, x, 'g', -1, 64)
}

// htmlSpecial marks the bytes [html.EscapeString] escapes.
var htmlSpecial = [256]bool{'<': true, '>': true, '&': true, '\'': true, '"': true}

// appendEscaped appends s with <, >, &, ' and " escaped as
// [html.EscapeString] escapes them.
func appendEscaped(b []byte, s string) []byte {
	start := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if !htmlSpecial[c] {
			continue
		}
		b = append(b, s[start:i]...)
		switch c {
		case '<':
			b = append(b, "&lt;"...)
		case '>':
			b = append(b, "&gt;"...)
		case '&':
			b = append(b, "&amp;"...)
		case '\'':
			b = append(b, "&#39;"...)
		case '"':
			b = append(b, "&#34;"...)
		}
		start = i + 1
	}
	return append(b, s[start:]...)
}
