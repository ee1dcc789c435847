package audit

import (
	"encoding/binary"
	"math"
	"tandem/compare/fuzzseed"
	"testing"
)

// seeds reads the seed files matching pattern and fails when there are
// none, so a moved folder cannot silently empty the corpus.
func seeds(f *testing.F, pattern string) [][]byte {
	f.Helper()
	return fuzzseed.Load(f, pattern)
}

// decodeColumns reads the fuzz encoding: a byte n (bins), a byte k
// (sources), four little-endian doubles for the scale and shift ranges,
// then per bin the true value, the blinded value and k errors. Missing
// bytes read as zero, so every input gives columns; a second column is
// built from the same bytes with the roles of value and blinded value
// swapped, so the ratio attack runs too.
func decodeColumns(data []byte) []Column {
	pos := 0
	byteAt := func() int {
		if pos >= len(data) {
			return 0
		}
		pos++
		return int(data[pos-1])
	}
	float := func() float64 {
		var b [8]byte
		copy(b[:], data[min(pos, len(data)):])
		pos += 8
		return math.Float64frombits(binary.LittleEndian.Uint64(b[:]))
	}
	n, k := byteAt()%40, byteAt()%4
	c := Column{Observable: "o", Column: "a", Scale: [2]float64{float(), float()}, Shift: [2]float64{float(), float()}}
	c.BlindedErr = make([][]float64, k)
	for i := range n {
		c.Lo, c.Hi = append(c.Lo, float64(i)), append(c.Hi, float64(i+1))
		c.True = append(c.True, float())
		c.Blinded = append(c.Blinded, float())
		for j := range k {
			c.BlindedErr[j] = append(c.BlindedErr[j], float())
		}
	}
	d := c
	d.Column, d.True, d.Blinded = "b", c.Blinded, c.True
	return []Column{c, d}
}

// FuzzRun: any column, however odd its numbers, is audited without a
// panic, every finding is consistent (Broken exactly when the precision is
// under the threshold, no NaN precision except the fail-closed input
// check), and Detail stays short.
func FuzzRun(f *testing.F) {
	for _, s := range seeds(f, "run-*.bin") {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, fd := range Run(decodeColumns(data), DefaultThreshold) {
			if fd.Attack == NameInput {
				if !fd.Broken {
					t.Fatalf("input check not failing closed: %+v", fd)
				}
				continue
			}
			if math.IsNaN(fd.Precision) || fd.Precision < 0 {
				t.Fatalf("precision %v: %+v", fd.Precision, fd)
			}
			if fd.Broken != (fd.Precision < DefaultThreshold) {
				t.Fatalf("Broken inconsistent: %+v", fd)
			}
			if len(fd.Detail) > 400 {
				t.Fatalf("detail of %d bytes", len(fd.Detail))
			}
		}
	})
}
