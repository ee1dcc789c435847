// Package keykind tells apart the key files the parties of a campaign
// hold, so that a file given to the wrong flag is refused with a message
// that says what the file is and where it belongs, instead of a parse
// error or a later failure.
//
// The custodian holds two secrets that are easy to confuse: the SSH
// private key that signs its steps (--key) and the age identity that opens
// the sealed tables and the blinding key (--identity). Only the first
// lines of a file are looked at, and no message quotes a file's content.
package keykind

import (
	"bytes"
	"io"
	"os"
	"strings"

	"tandem/compare/table"
)

// Kind is what a key file holds.
type Kind int

// Kinds of key files.
const (
	Unknown       Kind = iota
	SSHPrivateKey      // an OpenSSH or PEM private key ("-----BEGIN … PRIVATE KEY-----")
	SSHPublicKey       // an authorized_keys line ("ssh-ed25519 AAAA…")
	AgeIdentity        // an age X25519 identity ("AGE-SECRET-KEY-1…")
	AgeRecipient       // an age X25519 recipient ("age1…")
	AgeFile            // a file encrypted with age ("age-encryption.org/v1")
)

// String names the kind for messages.
func (k Kind) String() string {
	switch k {
	case SSHPrivateKey:
		return "an SSH private key"
	case SSHPublicKey:
		return "an SSH public key"
	case AgeIdentity:
		return "an age identity"
	case AgeRecipient:
		return "an age recipient (a public key)"
	case AgeFile:
		return "a file encrypted with age"
	}
	return "not a key file tandem knows"
}

// Detect tells what data holds from its first non-comment line (age
// identity files start with "# created:" or "# public key:" comments).
// Leading blank lines and a UTF-8 byte order mark are skipped.
func Detect(data []byte) Kind {
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	for len(data) > 0 {
		line := data
		if i := bytes.IndexByte(data, '\n'); i >= 0 {
			line, data = data[:i], data[i+1:]
		} else {
			data = nil
		}
		s := strings.TrimSpace(string(line))
		switch {
		case s == "":
			continue
		case strings.HasPrefix(s, "#"):
			continue
		case strings.HasPrefix(s, "-----BEGIN ") && strings.HasSuffix(s, "PRIVATE KEY-----"):
			return SSHPrivateKey
		case strings.HasPrefix(s, "AGE-SECRET-KEY-1"):
			return AgeIdentity
		case strings.HasPrefix(s, "age-encryption.org/"):
			return AgeFile
		case strings.HasPrefix(s, "age1") && !strings.ContainsAny(s, " \t"):
			return AgeRecipient
		case isSSHPublic(s):
			return SSHPublicKey
		}
		return Unknown
	}
	return Unknown
}

// isSSHPublic reports whether s looks like an authorized_keys line: a key
// type and a base64 blob.
func isSSHPublic(s string) bool {
	f := strings.Fields(s)
	if len(f) < 2 || !strings.HasPrefix(f[1], "AAAA") {
		return false
	}
	t := f[0]
	return strings.HasPrefix(t, "ssh-") || strings.HasPrefix(t, "ecdsa-sha2-") || strings.HasPrefix(t, "sk-")
}

// CheckSigningKey refuses, naming the file, data that is not an SSH
// private key: what --key takes. It says what the file is instead and,
// for the custodian's age identity, that it belongs to --identity.
func CheckSigningKey(name string, data []byte) error {
	switch k := Detect(data); k {
	case SSHPrivateKey:
		return nil
	case AgeIdentity:
		return table.Errorf(name, 0, 0, "this is the custodian's age identity, not an SSH signing key: give it to --identity; --key takes the SSH private key whose public half the protocol lists")
	case SSHPublicKey:
		return table.Errorf(name, 0, 0, "this is an SSH public key; --key takes the private key beside it (the same name without .pub)")
	default:
		return table.Errorf(name, 0, 0, "this is %s, not an SSH signing key; --key takes the SSH private key whose public half the protocol lists", k)
	}
}

// CheckIdentity refuses, naming the file, data that cannot open what is
// sealed to the custodian recipient of a protocol: an age recipient
// ("age1…") needs an age identity, an SSH recipient the SSH private key.
// It says what the file is instead and, for an SSH signing key given where
// the age identity belongs, that it belongs to --key.
func CheckIdentity(name string, data []byte, recipient string) error {
	k := Detect(data)
	ageRecipient := strings.HasPrefix(strings.TrimSpace(recipient), "age1")
	switch {
	case k == AgeIdentity && ageRecipient, k == SSHPrivateKey && !ageRecipient:
		return nil
	case k == SSHPrivateKey:
		return table.Errorf(name, 0, 0, "this is an SSH private key (the custodian's SSH signing key?), not the age identity: the protocol seals to an age recipient (age1…), which only the age identity (a file with an AGE-SECRET-KEY-1… line) opens; an SSH signing key goes to --key")
	case k == AgeIdentity:
		return table.Errorf(name, 0, 0, "this is an age identity, but the protocol seals to an SSH key: the identity is the SSH private key of that public key")
	case k == SSHPublicKey || k == AgeRecipient:
		return table.Errorf(name, 0, 0, "this is %s; --identity takes the custodian's secret identity, not a public key", k)
	default:
		return table.Errorf(name, 0, 0, "this is %s; --identity takes the custodian's age identity (a file with an AGE-SECRET-KEY-1… line)", k)
	}
}

// maxRead bounds how much of a file CheckSigningKeyFile reads.
const maxRead = 64 << 10

// CheckSigningKeyFile is [CheckSigningKey] on a file's first 64 KiB. A file
// that cannot be read passes: the caller's own reader reports that.
func CheckSigningKeyFile(path string) error {
	data, ok := head(path)
	if !ok {
		return nil
	}
	return CheckSigningKey(path, data)
}

// CheckIdentityFile is [CheckIdentity] on a file's first 64 KiB. A file
// that cannot be read passes: the caller's own reader reports that.
func CheckIdentityFile(path, recipient string) error {
	data, ok := head(path)
	if !ok {
		return nil
	}
	return CheckIdentity(path, data, recipient)
}

func head(path string) ([]byte, bool) {
	f, err := os.Open(path)
	if err != nil {
		return nil, false
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, maxRead))
	if err != nil {
		return nil, false
	}
	return data, true
}
