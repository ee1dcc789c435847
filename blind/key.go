package blind

import (
	"crypto/hkdf"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"strconv"
)

// Key is a campaign's 256-bit blinding key K. It never appears in output,
// logs or error messages; its String method hides it.
type Key struct{ b [32]byte }

// GenerateKey draws a key from the operating system's random source.
func GenerateKey() (*Key, error) {
	var k Key
	if _, err := rand.Read(k.b[:]); err != nil {
		return nil, fmt.Errorf("reading the OS random source: %w", err)
	}
	return &k, nil
}

// KeyFromBytes makes a key from its 32 bytes (as the key file holds them).
func KeyFromBytes(b []byte) (*Key, error) {
	if len(b) != 32 {
		return nil, errors.New("a campaign key has 32 bytes")
	}
	var k Key
	copy(k.b[:], b)
	return &k, nil
}

// Bytes returns a copy of the key's 32 bytes. They are the campaign's
// secret until unblinding publishes them.
func (k *Key) Bytes() []byte { return append([]byte(nil), k.b[:]...) }

func (k *Key) String() string { return "blind.Key(hidden)" }

// GoString hides the key from %#v too.
func (k *Key) GoString() string { return k.String() }

// Commitment is the public commitment to K, logged at init:
//
//	SHA-256("tandem/v2 key-commitment" || 0x00 || salt || K)
func (k *Key) Commitment(salt []byte) [32]byte {
	h := sha256.New()
	h.Write([]byte(Version + " key-commitment\x00"))
	h.Write(salt)
	h.Write(k.b[:])
	var out [32]byte
	h.Sum(out[:0])
	return out
}

// Matches reports, in constant time, whether k opens the commitment.
func (k *Key) Matches(salt []byte, commitment [32]byte) bool {
	c := k.Commitment(salt)
	return subtle.ConstantTimeCompare(c[:], commitment[:]) == 1
}

// Uniform derives a number in [0, 1) from K and an info string with
// HKDF-SHA256 (RFC 5869, empty salt): 8 bytes of output keying material,
// read big-endian, of which the top 53 bits become the fraction:
//
//	u = (uint64be(OKM[0:8]) >> 11) / 2^53
func (k *Key) Uniform(info string) float64 {
	return float64(binary.BigEndian.Uint64(derive(k.b[:], info, 8))>>11) / (1 << 53)
}

// derive is HKDF-SHA256 with an empty salt (RFC 5869: a string of HashLen
// zeros).
func derive(ikm []byte, info string, n int) []byte {
	okm, err := hkdf.Key(sha256.New, ikm, nil, info, n)
	if err != nil {
		panic("blind: hkdf: " + err.Error()) // only for lengths > 255·32
	}
	return okm
}

// CommonScope is the scope of the map every team's table of an observable
// is published in once the comparison of that observable has opened.
const CommonScope = "common"

// TeamScope is the scope of a team's own map, used for its tables of an
// observable until every team has sealed that observable.
func TeamScope(team string) string { return "team " + team }

// Info returns the HKDF info string of one blinding parameter:
//
//	"tandem/v2 blind" 0x00 observable 0x00 column 0x00 scope 0x00 param 0x00 bin
//
// with scope "common" or "team NAME", param "scale" or "shift", and bin the
// 0-based bin index in decimal ASCII. Names never contain 0x00.
func Info(observable, column, scope, param string, bin int) string {
	return Version + " blind\x00" + observable + "\x00" + column + "\x00" + scope + "\x00" + param + "\x00" + strconv.Itoa(bin)
}

// Range is a declared blinding range [Lo, Hi].
type Range struct{ Lo, Hi float64 }

// Draw maps u in [0, 1) onto the range: Lo + u·(Hi − Lo).
//
// The explicit conversion rounds the product on its own: Go may otherwise
// fuse x*y + z into one multiply-add (it does on arm64), which would give
// other bytes than the spec's separately rounded operations.
func (r Range) Draw(u float64) float64 { return r.Lo + float64(u*(r.Hi-r.Lo)) }

// Width is Hi − Lo.
func (r Range) Width() float64 { return r.Hi - r.Lo }

// Limits on blinding factors: outside them blinding either does nothing
// useful or breaks the arithmetic (overflow to ±Inf, collapse to
// subnormal numbers) on values a table can hold.
const (
	MinScale = 1e-6
	MaxScale = 1e6
	// MinScaleRatio is the smallest allowed Hi/Lo of a scale range: a
	// narrower range barely hides the scale.
	MinScaleRatio = 1.2
	// MaxShift bounds |Lo| and |Hi| of a shift range.
	MaxShift = 1e300
)

// CheckScale refuses scale ranges that would make an identity or a
// degenerate map.
func CheckScale(r Range) error {
	if !finite(r.Lo) || !finite(r.Hi) {
		return fmt.Errorf("[%v, %v] is not a finite range", r.Lo, r.Hi)
	}
	if r.Lo <= 0 || r.Hi <= 0 {
		return fmt.Errorf("[%v, %v] must be positive, so pulls keep their sign", r.Lo, r.Hi)
	}
	if r.Lo < MinScale || r.Hi > MaxScale {
		return fmt.Errorf("[%v, %v] must lie within [%v, %v], or blinded numbers overflow or collapse to subnormals", r.Lo, r.Hi, MinScale, MaxScale)
	}
	if r.Hi < r.Lo*MinScaleRatio {
		return fmt.Errorf("[%v, %v] is too narrow to hide anything: hi must be at least %v × lo", r.Lo, r.Hi, MinScaleRatio)
	}
	return nil
}

// CheckShift refuses shift ranges of zero width or beyond [−MaxShift, MaxShift].
func CheckShift(r Range) error {
	if !finite(r.Lo) || !finite(r.Hi) {
		return fmt.Errorf("[%v, %v] is not a finite range", r.Lo, r.Hi)
	}
	if !(r.Hi > r.Lo) {
		return fmt.Errorf("[%v, %v] has no width: lo must be below hi", r.Lo, r.Hi)
	}
	if math.Abs(r.Lo) > MaxShift || math.Abs(r.Hi) > MaxShift || !finite(r.Hi-r.Lo) {
		return fmt.Errorf("[%v, %v] must lie within ±%v", r.Lo, r.Hi, MaxShift)
	}
	return nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// MapSpec names one column's map: where it applies and its ranges.
type MapSpec struct {
	Observable, Column, Scope string
	Scale, Shift              Range
}

// Map is the per-bin affine blinding map of one column: v' = S_i·v + O_i.
type Map struct {
	S, O []float64
}

// Map derives the blinding map of a column for n bins:
//
//	s_i = Scale.Draw(Uniform(Info(obs, col, scope, "scale", i)))
//	o_i = Shift.Draw(Uniform(Info(obs, col, scope, "shift", i)))
func (k *Key) Map(spec MapSpec, n int) Map {
	m := Map{S: make([]float64, n), O: make([]float64, n)}
	for i := 0; i < n; i++ {
		m.S[i] = spec.Scale.Draw(k.Uniform(Info(spec.Observable, spec.Column, spec.Scope, "scale", i)))
		m.O[i] = spec.Shift.Draw(k.Uniform(Info(spec.Observable, spec.Column, spec.Scope, "shift", i)))
	}
	return m
}

// Values returns s_i·v_i + o_i, the product rounded before the sum (no
// fused multiply-add, so every platform writes the same bytes).
func (m Map) Values(v []float64) []float64 {
	out := make([]float64, len(v))
	for i := range v {
		out[i] = float64(m.S[i]*v[i]) + m.O[i]
	}
	return out
}

// Errors returns s_i·σ_i (s_i > 0).
func (m Map) Errors(e []float64) []float64 {
	out := make([]float64, len(e))
	for i := range e {
		out[i] = m.S[i] * e[i]
	}
	return out
}

// Covariance returns s_i·s_j·V_ij.
func (m Map) Covariance(v [][]float64) [][]float64 {
	out := make([][]float64, len(v))
	for i := range v {
		out[i] = make([]float64, len(v[i]))
		for j := range v[i] {
			out[i][j] = m.S[i] * m.S[j] * v[i][j]
		}
	}
	return out
}
