package catalog

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"io"
	"testing"
)

// The reader hands on every byte in order and its Sum is the SHA-256 of
// them all (crypto/sha256 is the reference), across many small pieces.
func TestHashingReader(t *testing.T) {
	data := make([]byte, 10_007)
	for i := range data {
		data[i] = byte(i * 31)
	}
	h := NewHashingReader(bytes.NewReader(data), 512)
	defer h.Close()
	got, err := io.ReadAll(h)
	if err != nil || !bytes.Equal(got, data) {
		t.Fatalf("read %d bytes, %v", len(got), err)
	}
	want := sha256.Sum256(data)
	if h.Sum() != hex.EncodeToString(want[:]) {
		t.Errorf("Sum %s, want %x", h.Sum(), want)
	}
}

// Closing before the end stops the goroutine without a read blocking.
func TestHashingReaderCloseEarly(t *testing.T) {
	h := NewHashingReader(bytes.NewReader(make([]byte, 1<<16)), 256)
	if _, err := h.Read(make([]byte, 10)); err != nil {
		t.Fatal(err)
	}
	h.Close()
	h.Close() // twice is fine
}
