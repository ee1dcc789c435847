package report

import (
	"math"
	"strconv"
	"strings"
)

// ticks returns up to about six round tick positions in [lo, hi]: steps of
// 1, 2 or 5 times a power of ten on a linear axis, whole decades on a log
// axis (every second or third decade when the axis spans many).
func ticks(lo, hi float64, log bool) []float64 {
	var out []float64
	if log {
		e0, e1 := math.Ceil(math.Log10(lo)-1e-9), math.Floor(math.Log10(hi)+1e-9)
		if math.IsInf(e0, 0) || math.IsInf(e1, 0) || math.IsNaN(e0) || math.IsNaN(e1) {
			return nil // an infinite edge: no decades to mark (and no end to the loop)
		}
		step := math.Max(1, math.Ceil((e1-e0+1)/8))
		for e := e0; e <= e1; e += step {
			out = append(out, math.Pow(10, e))
		}
		return out
	}
	span := hi - lo
	if !(span > 0) || math.IsInf(span, 0) {
		return nil
	}
	step := tickStep(span)
	for t := math.Ceil(lo/step) * step; t <= hi+1e-9*span; t += step {
		out = append(out, math.Round(t/step)*step)
	}
	return out
}

// minorTicks returns the unlabelled ticks 2…9 × 10ᵏ of a log axis over
// [lo, hi], when it spans at most six decades (beyond that they crowd).
func minorTicks(lo, hi float64) []float64 {
	e0, e1 := math.Floor(math.Log10(lo)), math.Ceil(math.Log10(hi))
	if !(e1-e0 <= 6) {
		return nil
	}
	var out []float64
	for e := e0; e < e1; e++ {
		for m := 2.0; m <= 9; m++ {
			if t := m * math.Pow(10, e); t >= lo && t <= hi {
				out = append(out, t)
			}
		}
	}
	return out
}

// tickStep is the round step (1, 2 or 5 × 10ᵏ) giving at most six ticks
// over span.
func tickStep(span float64) float64 {
	step := math.Pow(10, math.Floor(math.Log10(span/5)))
	for _, m := range []float64{1, 2, 5, 10} {
		if span/(step*m) <= 6 {
			return step * m
		}
	}
	return step * 10
}

// tickLabels formats the ticks of one axis in one format: plain decimals
// with the same number of places when the values are of everyday size,
// otherwise mantissas with a common factor ×10ⁿ returned as mult (to be
// shown once at the end of the axis). Log axes label every decade as 10ⁿ.
func tickLabels(ts []float64, log bool) (labels []string, mult string) {
	labels = make([]string, len(ts))
	if log {
		for i, t := range ts {
			labels[i] = "10" + superscript(int(math.Round(math.Log10(t))))
		}
		return labels, ""
	}
	if len(ts) == 0 {
		return labels, ""
	}
	maxAbs := 0.0
	for _, t := range ts {
		maxAbs = math.Max(maxAbs, math.Abs(t))
	}
	step := maxAbs
	if len(ts) > 1 {
		step = ts[1] - ts[0]
	}
	if maxAbs == 0 || step <= 0 {
		for i := range labels {
			labels[i] = "0"
		}
		return labels, ""
	}
	k := int(math.Floor(math.Log10(step) + 1e-9)) // step = m·10ᵏ
	n := 0
	if maxAbs >= 1e4 || maxAbs < 1e-2 {
		n = int(math.Floor(math.Log10(maxAbs) + 1e-9))
		mult = "×10" + superscript(n)
	}
	places := max(0, n-k)
	for i, t := range ts {
		m := t / math.Pow(10, float64(n))
		if math.Abs(m) < 1e-12*math.Abs(step/math.Pow(10, float64(n))) {
			m = 0
		}
		labels[i] = strings.Replace(strconv.FormatFloat(m, 'f', places, 64), "-", "−", 1)
	}
	return labels, mult
}

// superscript writes an integer with Unicode superscript digits.
func superscript(n int) string {
	const digits = "⁰¹²³⁴⁵⁶⁷⁸⁹"
	var b strings.Builder
	if n < 0 {
		b.WriteString("⁻")
		n = -n
	}
	for _, c := range strconv.Itoa(n) {
		b.WriteString(string([]rune(digits)[c-'0']))
	}
	return b.String()
}
