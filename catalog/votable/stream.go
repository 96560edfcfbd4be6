package votable

import (
	"bufio"
	"bytes"
	"encoding/base64"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
)

// errStreamEOF is a document that ends inside a STREAM's text.
var errStreamEOF = errors.New("the document ends inside a base64 STREAM")

// b64Stream decodes the base64 text of a STREAM element straight from the
// document's bufio.Reader, up to (not including) the '<' of its end tag,
// so that encoding/xml resumes there. Whitespace is skipped (XML allows
// line breaks and indentation in the text).
type b64Stream struct {
	br    *bufio.Reader
	carry [4]byte
	nc    int
	ended bool // met the '<' after the text
	pad   bool // met '=' padding: the stream's end
}

// fill decodes into dst (len(dst) >= 3) and returns how many bytes it
// wrote, or io.EOF once the text has ended.
func (s *b64Stream) fill(dst []byte) (int, error) {
	n := 0
	for !s.ended && len(dst)-n >= 3 {
		if s.br.Buffered() == 0 {
			if _, err := s.br.Peek(1); err != nil {
				if err == io.EOF {
					return n, errStreamEOF
				}
				return n, err
			}
		}
		chunk, _ := s.br.Peek(s.br.Buffered())
		if i := bytes.IndexByte(chunk, '<'); i >= 0 {
			chunk, s.ended = chunk[:i], true
		}
		if max := (len(dst) - n) / 3 * 4; len(chunk) > max {
			chunk, s.ended = chunk[:max], false
		}
		used := len(chunk)
		for len(chunk) > 0 {
			line := chunk
			if j := bytes.IndexByte(chunk, '\n'); j >= 0 {
				line, chunk = chunk[:j], chunk[j+1:]
			} else {
				chunk = nil
			}
			line = bytes.TrimSpace(line)
			if s.nc > 0 {
				// Complete the group a previous read split, then go on fast.
				k := 0
				for have := s.nc; k < len(line) && have < 4; k++ {
					if c := line[k]; c != ' ' && c != '\t' && c != '\r' {
						have++
					}
				}
				m, err := s.slow(dst[n:], line[:k])
				n += m
				if err != nil {
					return n, err
				}
				line = line[k:]
			}
			if s.nc == 0 && !s.pad {
				k := len(line) / 4 * 4
				if m, err := base64.StdEncoding.Decode(dst[n:], line[:k]); err == nil {
					n += m
					s.pad = k > 0 && line[k-1] == '='
					line = line[k:]
				}
			}
			m, err := s.slow(dst[n:], line)
			n += m
			if err != nil {
				return n, err
			}
		}
		if _, err := s.br.Discard(used); err != nil {
			return n, err
		}
	}
	if s.ended && n == 0 {
		if s.nc != 0 {
			return 0, fmt.Errorf("the base64 STREAM text ends in the middle of a 4-character group")
		}
		return 0, io.EOF
	}
	return n, nil
}

// slow decodes text a byte at a time through the 4-character carry: text
// with interior whitespace, or groups split across reads.
func (s *b64Stream) slow(dst, text []byte) (int, error) {
	n := 0
	for _, c := range text {
		switch c {
		case ' ', '\t', '\r', '\n':
			continue
		case '&':
			return n, fmt.Errorf("the base64 STREAM text holds an entity reference, which base64 never needs")
		}
		if s.pad && c != '=' {
			return n, fmt.Errorf("the base64 STREAM text goes on after its '=' padding")
		}
		s.carry[s.nc] = c
		s.nc++
		if s.nc == 4 {
			m, err := base64.StdEncoding.Decode(dst[n:], s.carry[:])
			if err != nil {
				return n, fmt.Errorf("the STREAM text is not base64: %q", s.carry[:])
			}
			n += m
			s.nc = 0
			s.pad = s.carry[3] == '='
		}
	}
	return n, nil
}

// decodedChunk is base64-decoded bytes handed from the decoding
// goroutine to the row decoder.
type decodedChunk struct {
	b   []byte
	err error
}

// chunkSource decodes a STREAM's base64 on a goroutine of its own, a
// bounded number of chunks ahead of the row decoder.
type chunkSource struct {
	full chan decodedChunk
	free chan []byte
	done chan struct{}
	cur  []byte
	held []byte
	err  error
}

func newChunkSource(src *b64Stream) *chunkSource {
	c := &chunkSource{full: make(chan decodedChunk, 3), free: make(chan []byte, 4), done: make(chan struct{})}
	for range cap(c.free) {
		c.free <- make([]byte, 256<<10)
	}
	go func() {
		defer close(c.full)
		for {
			var b []byte
			select {
			case b = <-c.free:
			case <-c.done:
				return
			}
			n, err := src.fill(b)
			select {
			case c.full <- decodedChunk{b[:n], err}:
			case <-c.done:
				return
			}
			if err != nil {
				return
			}
		}
	}()
	return c
}

// fill is b64Stream.fill, from the chunks.
func (c *chunkSource) fill(dst []byte) (int, error) {
	for len(c.cur) == 0 {
		if c.err != nil {
			return 0, c.err
		}
		if c.held != nil {
			c.free <- c.held[:cap(c.held)]
			c.held = nil
		}
		ch, ok := <-c.full
		if !ok {
			c.err = io.EOF
			continue
		}
		c.held, c.cur, c.err = ch.b, ch.b, ch.err
	}
	n := copy(dst, c.cur)
	c.cur = c.cur[n:]
	return n, nil
}

// stop ends the goroutine; the caller must not use the document's reader
// unless the stream was read to its end.
func (c *chunkSource) stop() {
	select {
	case <-c.done:
	default:
		close(c.done)
	}
	for range c.full {
	}
}

// rowStream is the decoded bytes of a binary stream in a bounded buffer,
// handed out a value at a time. The bytes from mark on stay in the buffer
// (a row's raw bytes, kept for the rejected-rows file).
type rowStream struct {
	src      *chunkSource
	buf      []byte
	r, w     int
	mark     int
	eof      bool
	consumed int64 // decoded bytes before buf[0]
}

func newRowStream(src *chunkSource) *rowStream {
	return &rowStream{src: src, buf: make([]byte, 1<<20)}
}

// next returns the next n bytes, valid until the next call. At the end of
// the stream it returns io.EOF when nothing is left, else
// io.ErrUnexpectedEOF.
func (s *rowStream) next(n int) ([]byte, error) {
	if s.w-s.r >= n {
		p := s.buf[s.r : s.r+n]
		s.r += n
		return p, nil
	}
	if err := s.more(n); err != nil {
		return nil, err
	}
	p := s.buf[s.r : s.r+n]
	s.r += n
	return p, nil
}

func (s *rowStream) more(n int) error {
	for s.w-s.r < n {
		if s.eof {
			if s.w == s.r {
				return io.EOF
			}
			return io.ErrUnexpectedEOF
		}
		if s.mark > 0 && s.r+n+4096 > len(s.buf) {
			copy(s.buf, s.buf[s.mark:s.w])
			s.consumed += int64(s.mark)
			s.r -= s.mark
			s.w -= s.mark
			s.mark = 0
		}
		if need := s.r + n + 4096; need > len(s.buf) {
			nb := make([]byte, max(2*len(s.buf), need))
			copy(nb, s.buf[:s.w])
			s.buf = nb
		}
		m, err := s.src.fill(s.buf[s.w:])
		s.w += m
		if err == io.EOF {
			s.eof = true
		} else if err != nil {
			return err
		}
	}
	return nil
}

// value is the package's value for the stream itself, without the
// interface call, for the hot loop.
func (s *rowStream) value(f *field) ([]byte, int, error) {
	n := f.count
	if f.variable {
		p, err := s.next(4)
		if err != nil {
			return nil, 0, err
		}
		n = int(binary.BigEndian.Uint32(p))
		if f.bytesFor(n) > maxValueBytes || n < 0 {
			return nil, 0, fmt.Errorf("a variable-length value claims %d elements", n)
		}
	}
	p, err := s.next(f.bytesFor(n))
	return p, n, err
}

// atEnd says whether the stream has no bytes left.
func (s *rowStream) atEnd() (bool, error) {
	if s.w > s.r {
		return false, nil
	}
	err := s.more(1)
	if err == io.EOF {
		return true, nil
	}
	return false, err
}

// sliceSource hands out a kept row's bytes the way rowStream does.
type sliceSource struct{ b []byte }

func (s *sliceSource) next(n int) ([]byte, error) {
	if len(s.b) < n {
		return nil, io.ErrUnexpectedEOF
	}
	p := s.b[:n]
	s.b = s.b[n:]
	return p, nil
}
