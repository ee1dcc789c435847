package format

import (
	"encoding/base64"
	"fmt"
	"strings"
	"time"
	"unicode/utf8"
)

// The value rules of SPEC.md section 1 (common grammar), shared by the
// statement and ledger parsers.

// ValidName reports whether s is a name: 1 to 64 ASCII letters, digits,
// '_', '.' or '-', starting with a letter or digit.
func ValidName(s string) bool {
	if len(s) == 0 || len(s) > 64 {
		return false
	}
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= 'a' && c <= 'z', c >= 'A' && c <= 'Z', c >= '0' && c <= '9':
		case i > 0 && (c == '_' || c == '.' || c == '-'):
		default:
			return false
		}
	}
	return true
}

// validHex64 reports whether s is 64 lowercase hex digits.
func validHex64(s string) bool {
	if len(s) != 64 {
		return false
	}
	for i := 0; i < len(s); i++ {
		if c := s[i]; !(c >= '0' && c <= '9' || c >= 'a' && c <= 'f') {
			return false
		}
	}
	return true
}

// parseCount reads a count: 1 to 999999999 in decimal, no sign, no
// leading zero.
func parseCount(s string) (int, bool) {
	if len(s) == 0 || len(s) > 9 || s[0] == '0' {
		return 0, false
	}
	n := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c < '0' || c > '9' {
			return 0, false
		}
		n = 10*n + int(c-'0')
	}
	return n, true
}

// validUTCTime reports whether s is a utc-time: RFC 3339 in UTC to the
// second, "2026-12-01T09:30:00Z", naming a real instant (year 0001–9999,
// month 01–12, a day the month has, hour 00–23, minute and second 00–59:
// no leap second).
func validUTCTime(s string) bool {
	if len(s) != 20 {
		return false
	}
	for i := 0; i < len(s); i++ {
		want := "dddd-dd-ddTdd:dd:ddZ"[i]
		if c := s[i]; (want == 'd' && (c < '0' || c > '9')) || (want != 'd' && c != want) {
			return false
		}
	}
	if s[:4] == "0000" {
		return false // years 0001 to 9999
	}
	t, err := time.Parse(time.RFC3339, s)
	return err == nil && t.UTC().Format(time.RFC3339) == s
}

// validFingerprint reports whether s is "SHA256:" followed by the
// unpadded base64 of 32 bytes, as ssh-keygen -l prints a key's
// fingerprint (the last character's unused bits zero).
func validFingerprint(s string) bool {
	b64, ok := strings.CutPrefix(s, "SHA256:")
	if !ok || len(b64) != 43 {
		return false
	}
	raw, err := base64.RawStdEncoding.Strict().DecodeString(b64)
	return err == nil && len(raw) == 32
}

// Forbidden reports whether r may not occur in free text nor in any
// ledger string: the C0 and C1 controls and DEL (U+0000–U+001F,
// U+007F–U+009F), the line and paragraph separators (U+2028, U+2029) and
// the bidirectional formatting characters (U+061C, U+200E, U+200F,
// U+202A–U+202E, U+2066–U+2069), which can make a text display
// differently from what its bytes say.
func Forbidden(r rune) bool {
	switch {
	case r < 0x20, r >= 0x7f && r <= 0x9f:
		return true
	case r == 0x061c, r == 0x200e, r == 0x200f, r >= 0x2028 && r <= 0x202e, r >= 0x2066 && r <= 0x2069:
		return true
	}
	return false
}

// checkText checks free text: non-empty valid UTF-8 without a
// [Forbidden] character. The error names the byte offset.
func checkText(s string) error {
	if s == "" {
		return fmt.Errorf("empty text")
	}
	for i := 0; i < len(s); {
		r, n := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && n == 1:
			return &textError{i, "invalid UTF-8"}
		case Forbidden(r):
			return &textError{i, fmt.Sprintf("the character U+%04X, which text may not hold", r)}
		}
		i += n
	}
	return nil
}

type textError struct {
	at  int
	msg string
}

func (e *textError) Error() string { return e.msg }
