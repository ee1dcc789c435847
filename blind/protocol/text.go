package protocol

import (
	"fmt"
	"unicode/utf8"
)

// CleanText refuses free text (reasons, titles, labels) that could change
// how a report reads on a terminal or in a browser: invalid UTF-8, control
// characters (U+0000–U+001F, U+007F–U+009F, tab included), the line and
// paragraph separators U+2028 and U+2029, and the bidirectional formatting
// characters U+061C, U+200E, U+200F, U+202A–U+202E and U+2066–U+2069.
func CleanText(s string) error {
	if !utf8.ValidString(s) {
		return fmt.Errorf("text is not valid UTF-8")
	}
	for i, r := range s {
		switch {
		case r < 0x20, r >= 0x7f && r <= 0x9f:
			return fmt.Errorf("text holds the control character U+%04X at byte %d", r, i)
		case r == 0x2028, r == 0x2029:
			return fmt.Errorf("text holds the line separator U+%04X at byte %d", r, i)
		case r == 0x061c, r == 0x200e, r == 0x200f, r >= 0x202a && r <= 0x202e, r >= 0x2066 && r <= 0x2069:
			return fmt.Errorf("text holds the bidirectional formatting character U+%04X at byte %d", r, i)
		}
	}
	return nil
}
