package fitscat

import (
	"bufio"
	"compress/gzip"
	"crypto/sha256"
	"encoding/hex"
	"io"
	"os"
	"strings"

	"starvet/catalog"
)

// input is an opened FITS file: the raw bytes read and hashed on a
// goroutine of their own, gunzipped when the name ends in .gz or the bytes
// start with the gzip magic (RFC 1952), buffered.
type input struct {
	f    *os.File
	raw  *sumReader
	zr   *gzip.Reader
	r    *bufio.Reader // the FITS bytes
	size int64         // bytes in the file
	pos  int64         // FITS bytes consumed (uncompressed offset)
	name string
}

const bufBytes = 1 << 16

func open(name string) (*input, error) {
	f, err := os.Open(name)
	if err != nil {
		return nil, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	in := &input{f: f, raw: newSumReader(f, int(min(max(st.Size(), 4096), pieceBytes))), size: st.Size(), name: name}
	br := bufio.NewReaderSize(in.raw, bufBytes)
	magic, _ := br.Peek(2)
	if strings.HasSuffix(strings.ToLower(name), ".gz") || len(magic) == 2 && magic[0] == 0x1f && magic[1] == 0x8b {
		if in.zr, err = gzip.NewReader(br); err != nil {
			in.close()
			return nil, catalog.WrapFileError(name, 0, "unreadable gzip: ", catalog.ErrUnreadable, err)
		}
		br = bufio.NewReaderSize(in.zr, bufBytes)
	}
	in.r = br
	return in, nil
}

func (in *input) gzipped() bool { return in.zr != nil }

// finish reads what the table reader left, so that the hash covers the
// whole file, and returns the hex SHA-256 of the raw file bytes.
func (in *input) finish() (string, error) {
	if _, err := io.Copy(io.Discard, in.raw); err != nil {
		return "", catalog.WrapFileError(in.name, 0, "", catalog.ErrUnreadable, err)
	}
	return hex.EncodeToString(in.raw.total[:]), nil
}

func (in *input) close() {
	if in.zr != nil {
		in.zr.Close()
	}
	in.raw.stop()
	in.f.Close()
}

// sumReader reads a file in large pieces on a goroutine that also feeds
// them to SHA-256, so hashing overlaps decoding.
type sumReader struct {
	pieces chan piece
	spare  chan []byte
	quit   chan struct{}
	held   []byte // the piece being read out, returned to spare when empty
	rest   []byte
	err    error
	total  [sha256.Size]byte // valid once Read has returned io.EOF
}

type piece struct {
	b   []byte
	err error
}

const pieceBytes = 1 << 20

func newSumReader(r io.Reader, size int) *sumReader {
	s := &sumReader{pieces: make(chan piece, 2), spare: make(chan []byte, 3), quit: make(chan struct{})}
	for range cap(s.spare) {
		s.spare <- make([]byte, size)
	}
	go func() {
		defer close(s.pieces)
		h := sha256.New()
		for {
			var b []byte
			select {
			case b = <-s.spare:
			case <-s.quit:
				return
			}
			n, err := io.ReadFull(r, b)
			h.Write(b[:n])
			if err == io.ErrUnexpectedEOF {
				err = io.EOF
			}
			if err == io.EOF {
				h.Sum(s.total[:0])
			}
			select {
			case s.pieces <- piece{b[:n], err}:
			case <-s.quit:
				return
			}
			if err != nil {
				return
			}
		}
	}()
	return s
}

func (s *sumReader) Read(p []byte) (int, error) {
	for len(s.rest) == 0 {
		if s.err != nil {
			return 0, s.err
		}
		if s.held != nil {
			s.spare <- s.held[:cap(s.held)]
			s.held = nil
		}
		pc, ok := <-s.pieces
		if !ok {
			s.err = io.EOF
			continue
		}
		s.held, s.rest, s.err = pc.b, pc.b, pc.err
	}
	n := copy(p, s.rest)
	s.rest = s.rest[n:]
	return n, nil
}

func (s *sumReader) stop() {
	select {
	case <-s.quit:
	default:
		close(s.quit)
	}
}
