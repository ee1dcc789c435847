package campaign

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"filippo.io/age"
	"filippo.io/age/agessh"
	"golang.org/x/crypto/ssh"

	"tandem/compare/table"
	"tandem/report/outfile"
)

// ParseIdentity reads a custodian identity: an age identity file (lines
// "AGE-SECRET-KEY-1...", '#' comments) or an unencrypted OpenSSH private
// key. name is used in messages, which never include the content.
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
	data, err := readSecretFile(path)
	if err != nil {
		return nil, "", err
	}
	note := ""
	if fi, err := os.Stat(path); err == nil && fi.Mode().Perm()&0o077 != 0 {
		note = fmt.Sprintf("%s is readable by other users (mode %v); it holds the custodian's secret", path, fi.Mode().Perm())
	}
	ids, err := ParseIdentity(path, data)
	return ids, note, err
}

func readSecretFile(path string) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, table.Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, maxSmall+1))
	if err != nil {
		return nil, table.Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	if len(data) > maxSmall {
		return nil, table.Errorf(path, 0, 0, "larger than %d bytes; not a key file", maxSmall)
	}
	return data, nil
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
	if err := outfile.Create(path, []byte(body), 0o600); err != nil {
		return "", err
	}
	return rcpt, nil
}

// ReadSigner loads an SSH private key file for signing. Keys protected by
// a passphrase are refused with a hint to use ssh-agent; the key material
// never appears in errors.
func ReadSigner(path string) (ssh.Signer, error) {
	data, err := readSecretFile(path)
	if err != nil {
		return nil, err
	}
	s, err := ssh.ParsePrivateKey(data)
	if err != nil {
		var pm *ssh.PassphraseMissingError
		if errors.As(err, &pm) {
			return nil, table.Errorf(path, 0, 0, "key is protected by a passphrase; load it into ssh-agent and sign without --key")
		}
		return nil, table.Errorf(path, 0, 0, "not an SSH private key")
	}
	return s, nil
}

func encrypt(r age.Recipient, plain []byte) ([]byte, error) {
	var buf bytes.Buffer
	w, err := age.Encrypt(&buf, r)
	if err != nil {
		return nil, fmt.Errorf("age: %w", err)
	}
	if _, err := w.Write(plain); err != nil {
		return nil, err
	}
	if err := w.Close(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

func decrypt(step Step, name string, data []byte, ids []age.Identity) ([]byte, error) {
	r, err := age.Decrypt(bytes.NewReader(data), ids...)
	if err != nil {
		var nm *age.NoIdentityMatchError
		if errors.As(err, &nm) {
			return nil, &RefusedError{Step: step, Problems: []Problem{{Kind: ProblemState, Path: name, Message: "the identity given is not the custodian's"}}}
		}
		return nil, table.Errorf(name, 0, 0, "cannot open sealed file: %v", err)
	}
	out, err := io.ReadAll(io.LimitReader(r, maxTable))
	if err != nil {
		return nil, table.Errorf(name, 0, 0, "sealed file fails authentication (damaged or tampered): %v", err)
	}
	return out, nil
}

// InsideFolder reports whether path is dir or lies beneath it, after
// making both absolute and resolving the symbolic links of the parts that
// exist: where a secret must never be written.
func InsideFolder(dir, path string) bool {
	resolve := func(p string) string {
		p, err := filepath.Abs(p)
		if err != nil {
			return p
		}
		// resolve the longest existing prefix
		rest := ""
		for q := p; ; q = filepath.Dir(q) {
			if r, err := filepath.EvalSymlinks(q); err == nil {
				return filepath.Join(r, rest)
			}
			if filepath.Dir(q) == q {
				return p
			}
			rest = filepath.Join(filepath.Base(q), rest)
		}
	}
	d, f := resolve(dir), resolve(path)
	rel, err := filepath.Rel(d, f)
	return err == nil && rel != ".." && !strings.HasPrefix(rel, ".."+string(filepath.Separator))
}
