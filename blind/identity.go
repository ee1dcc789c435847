package blind

import (
	"bytes"
	"fmt"
	"os"
	"time"

	"filippo.io/age"
	"filippo.io/age/agessh"

	"tandem/blind/safefile"
	"tandem/compare/table"
)

// ParseIdentity reads a custodian identity: an age identity file (lines
// "AGE-SECRET-KEY-1...", '#' comments) or an unencrypted OpenSSH private
// key. name is used in messages, which never include the file's content.
func ParseIdentity(name string, data []byte) ([]age.Identity, error) {
	if bytes.Contains(data, []byte("-----BEGIN")) {
		id, err := agessh.ParseIdentity(data)
		if err != nil {
			return nil, table.Errorf(name, 0, 0, "not a usable SSH private key for age (passphrase-protected keys are not supported here)")
		}
		return []age.Identity{id}, nil
	}
	ids, err := age.ParseIdentities(bytes.NewReader(data))
	if err != nil {
		return nil, table.Errorf(name, 0, 0, "not an age identity file")
	}
	return ids, nil
}

// ReadIdentityFile reads a custodian identity file and warns (through the
// returned note) when it is readable by others.
func ReadIdentityFile(path string) ([]age.Identity, string, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, "", table.Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	note := ""
	if fi, err := os.Stat(path); err == nil && fi.Mode().Perm()&0o077 != 0 {
		note = fmt.Sprintf("%s is readable by other users (mode %v); it holds the custodian's secret", path, fi.Mode().Perm())
	}
	ids, err := ParseIdentity(path, data)
	return ids, note, err
}

// GenerateCustodian creates a new age X25519 identity in path (mode 0600,
// never overwriting) and returns its public recipient.
func GenerateCustodian(path string, now time.Time) (string, error) {
	id, err := age.GenerateX25519Identity()
	if err != nil {
		return "", err
	}
	rcpt := id.Recipient().String()
	body := fmt.Sprintf("# tandem custodian identity, created %s\n# public key: %s\n%s\n", now.UTC().Format(time.RFC3339), rcpt, id.String())
	if err := safefile.Create(path, []byte(body), 0o600); err != nil {
		return "", err
	}
	return rcpt, nil
}
