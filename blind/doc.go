// Package blind runs blinding campaigns: a folder holding the protocol
// (campaign.toml), an append-only hash-chained ledger, each team's true
// tables sealed to the custodian with age, the blinded tables everybody may
// compare, the signed sign-offs and, at the end, the unblinded tables.
//
// # Blinding
//
// A 256-bit key K from the OS random source is sealed to the custodian at
// init, and a commitment SHA-256("tandem/v1 key-commitment" 0x00 salt K)
// is logged. Each compared column gets an affine map
//
//	v' = s·v + o,   σ' = |s|·σ,   V'_ij = s_i s_j V_ij
//
// with s and o drawn from the declared ranges by HKDF-SHA256 (RFC 5869)
// keyed with K, the info string naming observable, column, parameter and
// (for shape blinding) bin; see [Info]. Every team gets the same map, so
// pulls, χ² and p-values are the same on blinded and true tables.
//
// True tables are never recovered by inverting the map: unblinding decrypts
// the sealed copies and checks them against their seal-time commitments.
//
// # Trust
//
// The package never prints and never exits. Secrets (K, identities) are not
// formatted into errors; [Key] hides itself from fmt.
package blind

import "crypto/subtle"

// constantEqualHex compares two digests or commitments in constant time.
func constantEqualHex(a, b string) bool {
	return subtle.ConstantTimeCompare([]byte(a), []byte(b)) == 1
}
