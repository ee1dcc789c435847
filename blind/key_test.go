package blind

import (
	"bytes"
	"encoding/hex"
	"testing"
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
	back, err := parseKey(k.marshal())
	if err != nil || back.b != k.b {
		t.Fatalf("key file round trip: %v", err)
	}
	if _, err := parseKey([]byte("tandem/v1 campaign-key\nkey: zz\n")); err == nil {
		t.Fatal("malformed key accepted")
	}
}
