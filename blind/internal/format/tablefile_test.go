package format

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"tandem/compare/table"
)

// TestAppendCSVMatchesTableWriter: the codec's canonical CSV is byte for
// byte what the table package writes, on random values of every
// magnitude (fixed seed).
func TestAppendCSVMatchesTableWriter(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	tb := &table.Table{LoName: "lo", HiName: "hi", Names: []string{"v", "e"}, Cols: make([][]float64, 2)}
	for i := 0; i < 500; i++ {
		tb.Lo, tb.Hi = append(tb.Lo, float64(i)), append(tb.Hi, float64(i+1))
		v := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(40)-20))
		if i%50 == 0 {
			v = 0
		}
		tb.Cols[0] = append(tb.Cols[0], v)
		tb.Cols[1] = append(tb.Cols[1], math.Abs(v)/3)
	}
	var want bytes.Buffer
	tb.WriteCSV(&want)
	if got := AppendCSV(nil, tb); !bytes.Equal(got, want.Bytes()) {
		t.Fatalf("AppendCSV differs from table.WriteCSV")
	}
	back, err := decodeCSV("x", want.String(), 1, "lo", "hi")
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(AppendCSV(nil, back), want.Bytes()) {
		t.Fatal("decodeCSV does not round-trip")
	}
	for _, bad := range []string{"lo,hi,v\n0,1,0x1p3\n", "lo,hi,v\n0,1,1_000\n", "lo,hi,v\n0,1,1e6\n", "lo,hi,v\n0,1,+2\n", "lo,hi,v\n0,1,2.50\n"} {
		if _, err := decodeCSV("x", bad, 1, "lo", "hi"); err == nil {
			t.Errorf("accepted %q", bad)
		}
	}
}

// TestTableHeaderValues: the comment lines' values are checked against
// SPEC.md section 7 (names, a count, a 64-digit seal commitment), with the
// line of the bad value.
func TestTableHeaderValues(t *testing.T) {
	good := "# tandem/v2 blinded table\n# campaign: c\n# team: t\n# observable: o\n# version: 1\n# map: common\n# sealed: " +
		strings.Repeat("0", 64) + "\nlo,hi,v\n0,1,2\n"
	if _, err := DecodeTableFile("f", []byte(good), Blinded, "lo", "hi"); err != nil {
		t.Fatalf("valid table refused: %v", err)
	}
	for _, c := range []struct{ old, new, want string }{
		{"# campaign: c\n", "# campaign: c d\n", "f:2:"},
		{"# team: t\n", "# team: .t\n", "f:3:"},
		{"# observable: o\n", "# observable: [events]\n", "f:4:"},
		{"# version: 1\n", "# version: 1234567890\n", "f:5:"},
		{"# version: 1\n", "# version: +1\n", "f:5:"},
		{"# sealed: 0", "# sealed: A", "f:7:"},
		{"# sealed: 0", "# sealed: ", "f:7:"},
	} {
		_, err := DecodeTableFile("f", []byte(strings.Replace(good, c.old, c.new, 1)), Blinded, "lo", "hi")
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%q: error %v, want one starting %q", c.new, err, c.want)
		}
	}
}
