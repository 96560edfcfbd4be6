package fingerprint

import (
	"crypto/sha256"
	"encoding/hex"
	"hash/fnv"
	"testing"
)

func TestFNV1a64(t *testing.T) {
	// Published FNV-1a 64 test vectors (from memory) and the standard
	// library's implementation.
	for _, c := range []struct {
		in   string
		want uint64
	}{{"", 0xcbf29ce484222325}, {"a", 0xaf63dc4c8601ec8c}} {
		if got := FNV1a64(c.in); got != c.want {
			t.Errorf("FNV1a64(%q) = %#x, want %#x", c.in, got, c.want)
		}
	}
	for _, s := range []string{"", "PL-0000001", "star \xff id", "0123456789abcdef0123456789"} {
		h := fnv.New64a()
		h.Write([]byte(s))
		if got, want := FNV1a64(s), h.Sum64(); got != want {
			t.Errorf("FNV1a64(%q) = %#x, hash/fnv %#x", s, got, want)
		}
		if FNV1a64([]byte(s)) != FNV1a64(s) {
			t.Errorf("FNV1a64 of %q differs between string and []byte", s)
		}
	}
}

func TestHex(t *testing.T) {
	// SHA-256 of "abc" (FIPS 180-2 example).
	const abc = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
	if got := Hex([]byte("abc"), 0); got != abc {
		t.Errorf("Hex = %s", got)
	}
	if got := Hex([]byte("abc"), 16); got != abc[:32] {
		t.Errorf("Hex 16 = %s", got)
	}
	j, err := JSON(map[string]int{"b": 2, "a": 1})
	if err != nil {
		t.Fatal(err)
	}
	if want := Hex([]byte(`{"a":1,"b":2}`), 0); j != want {
		t.Errorf("JSON = %s, want %s", j, want)
	}
	h := sha256.Sum256([]byte("x\ny\n"))
	if got := Lines([]string{"x", "y"}); got != hex.EncodeToString(h[:]) {
		t.Errorf("Lines = %s", got)
	}
	if _, err := JSON(func() {}); err == nil {
		t.Error("JSON of a func: no error")
	}
}
