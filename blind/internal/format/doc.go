// Package format encodes and decodes the files of a tandem/v2 campaign:
// table files (sealed, blinded, unblinded), sign-off statements, ledger
// lines and the key file. Every decoder accepts exactly one byte sequence
// per value: it re-encodes what it parsed and refuses input that differs,
// so digests and commitments always cover canonical bytes.
//
// # Common rules
//
// Files are UTF-8 with LF line ends and end with a LF. Names (campaign,
// party, team, observable, column) match [A-Za-z0-9][A-Za-z0-9_.-]{0,63}.
// Free text (reasons) holds no control character (U+0000–U+001F,
// U+007F–U+009F), no U+2028/U+2029 and no bidirectional formatting
// character (U+061C, U+200E, U+200F, U+202A–U+202E, U+2066–U+2069); no
// ledger string holds one either ([Forbidden]). Dates and ledger times are
// RFC 3339 UTC to the second and name a real instant.
// Digests and commitments are lowercase hex of SHA-256 (64 characters).
//
// # Numbers
//
// A table number v is written as follows. Zero (either sign) is "0".
// Otherwise take the shortest decimal digit string d1 d2 … dn (d1 ≠ 0, no
// trailing zero) and exponent x such that d1.d2…dn × 10^x reads back, by
// round-to-nearest-even, to the same IEEE-754 binary64 value. If
// −4 ≤ x < 6, write the plain decimal (a "-" for negative values, no "+",
// no leading zeros other than a single "0" before the point, no trailing
// point): 123456, 0.0001, 2.5. Otherwise write d1, then "." and d2…dn when
// n > 1, then "e", the sign of x ("+" or "-") and |x| with at least two
// digits: 1e+06, 1.234567e+06, 1.5e-07. This is [table.Format].
package format
