// Package fingerprint is starvet's one home for hashing: the lowercase hex
// SHA-256 fingerprints the ledger stores to decide what to recompute, and
// the 64-bit FNV-1a hash of ids used for seeds and hash tables. Ledgers
// compare stored fingerprints with new ones, so a helper here must never
// change the bytes it hashes or the text it returns.
package fingerprint
