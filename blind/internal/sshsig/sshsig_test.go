package sshsig

import (
	"crypto/ed25519"
	"crypto/rand"
	"strings"
	"testing"

	"golang.org/x/crypto/ssh"
)

func TestRoundTrip(t *testing.T) {
	_, priv, _ := ed25519.GenerateKey(rand.Reader)
	s, _ := ssh.NewSignerFromKey(priv)
	_, priv2, _ := ed25519.GenerateKey(rand.Reader)
	other, _ := ssh.NewSignerFromKey(priv2)
	msg := []byte("statement\n")
	sig, err := Sign(s, "tandem-signoff", msg)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(string(sig), "-----BEGIN SSH SIGNATURE-----\n") {
		t.Errorf("armor: %s", sig)
	}
	for _, line := range strings.Split(strings.TrimSpace(string(sig)), "\n") {
		if len(line) > 70 && !strings.HasPrefix(line, "-----") {
			t.Errorf("armor line longer than 70: %q", line)
		}
	}
	if err := Verify(sig, msg, "tandem-signoff", s.PublicKey()); err != nil {
		t.Fatalf("verify: %v", err)
	}
	if err := Verify(sig, []byte("statement!\n"), "tandem-signoff", s.PublicKey()); err == nil {
		t.Error("altered message verified")
	}
	if err := Verify(sig, msg, "file", s.PublicKey()); err == nil || !strings.Contains(err.Error(), "namespace") {
		t.Errorf("wrong namespace: %v", err)
	}
	if err := Verify(sig, msg, "tandem-signoff", other.PublicKey()); err == nil || !strings.Contains(err.Error(), "expected key") {
		t.Errorf("wrong key: %v", err)
	}
	if _, err := Parse([]byte("garbage")); err == nil {
		t.Error("garbage parsed")
	}
}
