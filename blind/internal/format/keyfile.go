package format

import (
	"encoding/hex"
	"errors"
	"strings"

	"tandem/blind"
)

// KeyHeader starts the key file: the plaintext sealed in key.age and the
// published key.revealed. The whole file is
//
//	tandem/v2 campaign-key LF "key: " HEX64 LF
//
// with HEX64 the 32 key bytes in lowercase hex.
const KeyHeader = blind.Version + " campaign-key\n"

// EncodeKey writes the key file.
func EncodeKey(k *blind.Key) []byte {
	return []byte(KeyHeader + "key: " + hex.EncodeToString(k.Bytes()) + "\n")
}

// DecodeKey reads a key file. Errors never include the content.
func DecodeKey(data []byte) (*blind.Key, error) {
	s, ok := strings.CutPrefix(string(data), KeyHeader)
	if !ok {
		if strings.HasPrefix(string(data), "tandem/v1 ") {
			return nil, errors.New("a tandem/v1 campaign key; this version reads " + blind.Version + " only")
		}
		return nil, errors.New("not a " + blind.Version + " campaign key")
	}
	s, ok = strings.CutPrefix(s, "key: ")
	s, nl := strings.CutSuffix(s, "\n")
	if !ok || !nl || len(s) != 64 {
		return nil, errors.New("malformed campaign key")
	}
	b, err := hex.DecodeString(s)
	if err != nil || hex.EncodeToString(b) != s {
		return nil, errors.New("malformed campaign key") // lowercase hex only
	}
	return blind.KeyFromBytes(b)
}
