package blind

import (
	"bytes"
	"encoding/hex"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestDeriveRFC5869 checks the key derivation against RFC 5869, appendix
// A.3 (test case 3: SHA-256, zero-length salt and info), the form every
// blinding parameter uses.
func TestDeriveRFC5869(t *testing.T) {
	ikm := bytes.Repeat([]byte{0x0b}, 22)
	want, _ := hex.DecodeString("8da4e775a563c18f715f802a063c5a31b8a11f5c5ee1879ec3454e5f3c738d2d9d201395faa4b61a96c8")
	if got := derive(ikm, "", 42); !bytes.Equal(got, want) {
		t.Errorf("HKDF-SHA256 = %x, RFC 5869 A.3 = %x", got, want)
	}
}

func TestKeyCommitment(t *testing.T) {
	k, _ := GenerateKey()
	salt := []byte("salt")
	c := k.Commitment(salt)
	if !k.Matches(salt, c) {
		t.Fatal("key does not open its own commitment")
	}
	other, _ := GenerateKey()
	if other.Matches(salt, c) || k.Matches([]byte("other"), c) {
		t.Fatal("commitment opened by another key or salt")
	}
	back, err := KeyFromBytes(k.Bytes())
	if err != nil || back.b != k.b {
		t.Fatalf("key round trip: %v", err)
	}
}

// TestKeyNeverFormatted: the key hides itself from fmt.
func TestKeyNeverFormatted(t *testing.T) {
	k, _ := GenerateKey()
	for _, f := range []string{"%v", "%+v", "%#v", "%s"} {
		if s := strings.TrimSpace(sprintf(f, k)); !strings.Contains(s, "hidden") {
			t.Errorf("%s prints %q", f, s)
		}
	}
}

// TestDegenerateMaps: identity and degenerate ranges are refused.
func TestDegenerateMaps(t *testing.T) {
	for _, r := range []Range{{1, 1}, {0, 2}, {-1, 2}, {-2, -1}, {1, 1.1}, {1e-9, 1}, {1, 1e9}} {
		if CheckScale(r) == nil {
			t.Errorf("scale %v accepted", r)
		}
	}
	for _, r := range []Range{{0, 0}, {5, 5}, {3, 1}, {-1e301, 0}} {
		if CheckShift(r) == nil {
			t.Errorf("shift %v accepted", r)
		}
	}
	if CheckScale(Range{0.5, 2}) != nil || CheckShift(Range{-10, 10}) != nil {
		t.Error("good ranges refused")
	}
}

// TestMapsUniform: the blinding parameters are a deterministic function
// of K and the info string, differ across observables, scopes and bins,
// and are uniform over the declared range (χ² goodness of fit over 20
// equal cells for 4000 keys from the OS source; threshold 1e-4).
func TestMapsUniform(t *testing.T) {
	spec := MapSpec{Observable: "flux", Column: "rate", Scope: CommonScope, Scale: Range{0.5, 2}, Shift: Range{-5, 5}}
	const keys, cells = 4000, 20
	counts := make([]float64, cells)
	for i := 0; i < keys; i++ {
		k, err := GenerateKey()
		if err != nil {
			t.Fatal(err)
		}
		m, m2 := k.Map(spec, 3), k.Map(spec, 3)
		if !slices.Equal(m.S, m2.S) || !slices.Equal(m.O, m2.O) {
			t.Fatal("map is not deterministic")
		}
		other := spec
		other.Observable = "ratio"
		team := spec
		team.Scope = TeamScope("heron")
		mo, mt := k.Map(other, 3), k.Map(team, 3)
		if m.O[0] == mo.O[0] || m.O[0] == mt.O[0] || m.O[0] == m.O[1] || m.S[1] == m.S[2] {
			t.Fatal("parameters repeat across observables, scopes or bins")
		}
		for j := range m.O {
			if m.O[j] < -5 || m.O[j] >= 5 || m.S[j] < 0.5 || m.S[j] >= 2 {
				t.Fatalf("parameter outside its range: s=%v o=%v", m.S[j], m.O[j])
			}
		}
		counts[int((m.O[0]+5)/10*cells)]++
	}
	stat := 0.0
	for _, c := range counts {
		stat += (c - keys/cells) * (c - keys/cells) / (keys / cells)
	}
	if p := (distuv.ChiSquared{K: cells - 1}).Survival(stat); p < 1e-4 {
		t.Errorf("offsets not uniform: %v (p = %v)", counts, p)
	}
	if got := Info("flux", "rate", "team heron", "shift", 4); got != "tandem/v2 blind\x00flux\x00rate\x00team heron\x00shift\x004" {
		t.Errorf("info string layout changed: %q", got)
	}
}
