package fingerprint

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
)

// Hex returns the lowercase hex SHA-256 of b, cut to its first n bytes when
// 0 < n < 32.
func Hex(b []byte, n int) string {
	h := sha256.Sum256(b)
	if n <= 0 || n > len(h) {
		n = len(h)
	}
	return hex.EncodeToString(h[:n])
}

// JSON returns the lowercase hex SHA-256 of v's JSON encoding: a fixed
// field order, sorted map keys and shortest round-trip floats, so equal
// values hash equally however they were written.
func JSON(v any) (string, error) {
	b, err := json.Marshal(v)
	if err != nil {
		return "", err
	}
	return Hex(b, 0), nil
}

// Lines returns the lowercase hex SHA-256 of the strings, each followed by
// a newline.
func Lines(ss []string) string {
	h := sha256.New()
	for _, s := range ss {
		h.Write([]byte(s))
		h.Write([]byte{'\n'})
	}
	return hex.EncodeToString(h.Sum(nil))
}

// FNV-1a 64-bit parameters (Fowler, Noll and Vo; from the published
// specification, common practice).
const (
	fnvOffset64 = 14695981039346656037
	fnvPrime64  = 1099511628211
)

// FNV1a64 returns the 64-bit FNV-1a hash of id. It does not allocate; the
// loop is written out (not hash/fnv) because ids are hashed on hot paths.
func FNV1a64[T string | []byte](id T) uint64 {
	h := uint64(fnvOffset64)
	for i := 0; i < len(id); i++ {
		h ^= uint64(id[i])
		h *= fnvPrime64
	}
	return h
}
