package catalog

import (
	"crypto/sha256"
	"encoding/hex"
	"io"
)

// HashingReader reads a file in pieces on a goroutine of its own that also
// feeds them to SHA-256, so that Report.SHA256 (the hex SHA-256 of the raw
// file bytes) costs a reader no time on its own core. Every format reader
// uses it; Close it when done, read to io.EOF or not.
type HashingReader struct {
	pieces chan hashPiece
	spare  chan []byte
	quit   chan struct{}
	held   []byte // the piece being read out, returned to spare when empty
	rest   []byte
	err    error
	total  [sha256.Size]byte // valid once Read has returned io.EOF
}

type hashPiece struct {
	b   []byte
	err error
}

// HashPieceBytes is the default piece size.
const HashPieceBytes = 1 << 20

// NewHashingReader reads r in pieces of pieceBytes (HashPieceBytes when
// <= 0), at most a few pieces ahead of the caller.
func NewHashingReader(r io.Reader, pieceBytes int) *HashingReader {
	if pieceBytes <= 0 {
		pieceBytes = HashPieceBytes
	}
	h := &HashingReader{pieces: make(chan hashPiece, 3), spare: make(chan []byte, 4), quit: make(chan struct{})}
	for range cap(h.spare) {
		h.spare <- make([]byte, pieceBytes)
	}
	go func() {
		defer close(h.pieces)
		sum := sha256.New()
		for {
			var b []byte
			select {
			case b = <-h.spare:
			case <-h.quit:
				return
			}
			n, err := io.ReadFull(r, b)
			sum.Write(b[:n])
			if err == io.ErrUnexpectedEOF {
				err = io.EOF
			}
			if err == io.EOF {
				sum.Sum(h.total[:0])
			}
			select {
			case h.pieces <- hashPiece{b[:n], err}:
			case <-h.quit:
				return
			}
			if err != nil {
				return
			}
		}
	}()
	return h
}

func (h *HashingReader) Read(p []byte) (int, error) {
	for len(h.rest) == 0 {
		if h.err != nil {
			return 0, h.err
		}
		if h.held != nil {
			h.spare <- h.held[:cap(h.held)]
			h.held = nil
		}
		pc, ok := <-h.pieces
		if !ok {
			h.err = io.EOF
			continue
		}
		h.held, h.rest, h.err = pc.b, pc.b, pc.err
	}
	n := copy(p, h.rest)
	h.rest = h.rest[n:]
	return n, nil
}

// Sum is the hex SHA-256 of every byte read; valid once Read has returned
// io.EOF.
func (h *HashingReader) Sum() string { return hex.EncodeToString(h.total[:]) }

// Close stops the reading goroutine.
func (h *HashingReader) Close() {
	select {
	case <-h.quit:
	default:
		close(h.quit)
	}
}
