// Package blind holds the secret of a blinding campaign and what is
// derived from it: the 256-bit key K, its public commitment, the HKDF info
// strings and the per-bin affine blinding map.
//
// # The map
//
// Each blinded column of an observable gets, for every bin i, its own
// factor s_i and offset o_i:
//
//	v'_i = s_i·v_i + o_i,   σ'_i = s_i·σ_i,   V'_ij = s_i·s_j·V_ij
//
// with s_i drawn from the declared scale range (which must be positive, so
// pulls keep their sign) and o_i from the declared shift range, by
// HKDF-SHA256 (RFC 5869) keyed with K and an info string that names the
// observable, the column, the scope (the common map or one team's map), the
// parameter and the bin; see [Info]. Because d'_i = s_i·d_i and
// σ'_d,i = s_i·σ_d,i, pulls, χ² and p-values are identical on blinded and
// true tables, in every scope.
//
// # Secrets
//
// The package never prints and never exits. [Key] hides itself from fmt;
// its bytes leave only through [Key.Bytes], for the sealed key file.
//
// The protocol, the campaign workflow and the file codecs live in
// blind/protocol, blind/campaign and blind/internal/format.
package blind

import "crypto/subtle"

// Version is the format version every tandem/v2 campaign artifact carries.
const Version = "tandem/v2"

// EqualHex compares two digests or commitments in constant time.
func EqualHex(a, b string) bool {
	return subtle.ConstantTimeCompare([]byte(a), []byte(b)) == 1
}
