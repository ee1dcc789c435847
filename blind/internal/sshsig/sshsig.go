// Package sshsig makes and checks OpenSSH signatures (the SSHSIG format of
// OpenSSH's PROTOCOL.sshsig), so that `ssh-keygen -Y verify` and `-Y sign`
// interoperate with tandem's sign-offs.
//
// golang.org/x/crypto/ssh has keys, signers and the wire encoding but no
// SSHSIG envelope; this package adds only that envelope:
//
//	signed data = "SSHSIG" string(namespace) string(reserved) string(hash_alg) string(H(message))
//	blob        = "SSHSIG" uint32(1) string(publickey) string(namespace) string(reserved) string(hash_alg) string(signature)
//
// armored as "-----BEGIN SSH SIGNATURE-----", base64 in 70-column lines,
// "-----END SSH SIGNATURE-----".
package sshsig

import (
	"bytes"
	"crypto/rand"
	"crypto/sha256"
	"crypto/sha512"
	"encoding/base64"
	"errors"
	"fmt"
	"strings"

	"golang.org/x/crypto/ssh"
)

const (
	magic      = "SSHSIG"
	beginArmor = "-----BEGIN SSH SIGNATURE-----"
	endArmor   = "-----END SSH SIGNATURE-----"
)

type signedData struct {
	Namespace string
	Reserved  string
	HashAlg   string
	Hash      string
}

type blob struct {
	Version   uint32
	PublicKey string
	Namespace string
	Reserved  string
	HashAlg   string
	Signature string
}

func hashMessage(alg string, msg []byte) ([]byte, error) {
	switch alg {
	case "sha512":
		h := sha512.Sum512(msg)
		return h[:], nil
	case "sha256":
		h := sha256.Sum256(msg)
		return h[:], nil
	}
	return nil, fmt.Errorf("unsupported hash algorithm %q", alg)
}

func toSign(namespace, alg string, msg []byte) ([]byte, error) {
	h, err := hashMessage(alg, msg)
	if err != nil {
		return nil, err
	}
	return append([]byte(magic), ssh.Marshal(signedData{namespace, "", alg, string(h)})...), nil
}

// Sign signs msg in namespace with signer and returns the armored signature.
// RSA keys sign with rsa-sha2-512, as ssh-keygen does.
func Sign(signer ssh.Signer, namespace string, msg []byte) ([]byte, error) {
	if namespace == "" {
		return nil, errors.New("sshsig: empty namespace")
	}
	return SignHash(signer, namespace, msg, "sha512")
}

// SignHash is [Sign] with another hash algorithm ("sha256"). tandem signs
// with sha512 only and [Verify] refuses anything else; this exists so the
// tests can make the signatures a verifier must refuse.
func SignHash(signer ssh.Signer, namespace string, msg []byte, alg string) ([]byte, error) {
	if namespace == "" {
		return nil, errors.New("sshsig: empty namespace")
	}
	data, err := toSign(namespace, alg, msg)
	if err != nil {
		return nil, err
	}
	var sig *ssh.Signature
	if as, ok := signer.(ssh.AlgorithmSigner); ok && signer.PublicKey().Type() == ssh.KeyAlgoRSA {
		sig, err = as.SignWithAlgorithm(rand.Reader, data, ssh.KeyAlgoRSASHA512)
	} else {
		sig, err = signer.Sign(rand.Reader, data)
	}
	if err != nil {
		return nil, fmt.Errorf("sshsig: signing: %w", err)
	}
	b := blob{1, string(signer.PublicKey().Marshal()), namespace, "", alg, string(ssh.Marshal(sig))}
	raw := append([]byte(magic), ssh.Marshal(b)...)
	return armor(raw), nil
}

func armor(raw []byte) []byte {
	enc := base64.StdEncoding.EncodeToString(raw)
	var out bytes.Buffer
	out.WriteString(beginArmor + "\n")
	for len(enc) > 70 {
		out.WriteString(enc[:70] + "\n")
		enc = enc[70:]
	}
	out.WriteString(enc + "\n" + endArmor + "\n")
	return out.Bytes()
}

// Signature is a parsed SSHSIG signature.
type Signature struct {
	PublicKey ssh.PublicKey
	Namespace string
	HashAlg   string
	sig       *ssh.Signature
}

// Parse reads an armored signature.
func Parse(armored []byte) (*Signature, error) {
	s := strings.TrimSpace(string(armored))
	body, ok := strings.CutPrefix(s, beginArmor)
	if !ok {
		return nil, errors.New("not an SSH signature (missing BEGIN line)")
	}
	body, ok = strings.CutSuffix(body, endArmor)
	if !ok {
		return nil, errors.New("SSH signature has no END line")
	}
	raw, err := base64.StdEncoding.DecodeString(strings.Join(strings.Fields(body), ""))
	if err != nil {
		return nil, fmt.Errorf("SSH signature is not valid base64: %v", err)
	}
	rest, ok := bytes.CutPrefix(raw, []byte(magic))
	if !ok {
		return nil, errors.New("SSH signature lacks the SSHSIG magic")
	}
	var b blob
	if err := ssh.Unmarshal(rest, &b); err != nil {
		return nil, fmt.Errorf("malformed SSH signature: %v", err)
	}
	if b.Version != 1 {
		return nil, fmt.Errorf("unsupported SSH signature version %d", b.Version)
	}
	pub, err := ssh.ParsePublicKey([]byte(b.PublicKey))
	if err != nil {
		return nil, fmt.Errorf("SSH signature carries a bad public key: %v", err)
	}
	var sig ssh.Signature
	if err := ssh.Unmarshal([]byte(b.Signature), &sig); err != nil {
		return nil, fmt.Errorf("malformed signature inside SSH signature: %v", err)
	}
	return &Signature{PublicKey: pub, Namespace: b.Namespace, HashAlg: b.HashAlg, sig: &sig}, nil
}

// Verify checks that armored is a valid signature of msg in namespace made
// by the key want.
func Verify(armored, msg []byte, namespace string, want ssh.PublicKey) error {
	s, err := Parse(armored)
	if err != nil {
		return err
	}
	// One valid byte sequence per signature: the armor this package
	// writes (70-column base64, LF line ends) and the hash sha512.
	if raw, err := base64.StdEncoding.DecodeString(Flatten(armored)); err != nil || !bytes.Equal(armor(raw), armored) {
		return errors.New("SSH signature is not in canonical armor (base64 in lines of 70 characters, LF line ends, nothing else)")
	}
	if s.HashAlg != "sha512" {
		return fmt.Errorf("SSH signature uses hash %q; only sha512 is accepted", s.HashAlg)
	}
	if !bytes.Equal(s.PublicKey.Marshal(), want.Marshal()) {
		return fmt.Errorf("signed by %s, not by the expected key %s", ssh.FingerprintSHA256(s.PublicKey), ssh.FingerprintSHA256(want))
	}
	if s.Namespace != namespace {
		return fmt.Errorf("signature is for namespace %q, not %q", s.Namespace, namespace)
	}
	data, err := toSign(namespace, s.HashAlg, msg)
	if err != nil {
		return err
	}
	if s.PublicKey.Type() == ssh.KeyAlgoRSA && s.sig.Format == ssh.KeyAlgoRSA {
		return errors.New("RSA signatures with SHA-1 are not accepted")
	}
	if err := s.PublicKey.Verify(data, s.sig); err != nil {
		return errors.New("signature does not verify")
	}
	return nil
}

// Flatten returns the base64 body of an armored signature on one line (the
// form the ledger stores).
func Flatten(armored []byte) string {
	s := strings.TrimSpace(string(armored))
	s = strings.TrimPrefix(s, beginArmor)
	s = strings.TrimSuffix(s, endArmor)
	return strings.Join(strings.Fields(s), "")
}

// Armor wraps a one-line base64 signature (as [Flatten] returns it) in the
// armor ssh-keygen reads.
func Armor(b64 string) []byte {
	raw, err := base64.StdEncoding.DecodeString(b64)
	if err != nil {
		return []byte(beginArmor + "\n" + b64 + "\n" + endArmor + "\n")
	}
	return armor(raw)
}
