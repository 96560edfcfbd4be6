package csvcat

import (
	"bytes"
	"encoding/csv"
	"errors"
	"io"
	"strings"

	"starvet/catalog"
)

// The reader splits lines itself while they hold no double quote: such a
// line is one CSV record whose fields are the texts between commas, and
// encoding/csv would return exactly those. At the first line with a quote
// the rest of the input goes to an encoding/csv Reader, which stays the
// reference for everything the simple rule does not cover (quoted fields,
// line breaks inside quotes, bare quotes).

// lineSplitter hands out the input line by line, with encoding/csv's line
// rules: lines end at \n, a \r before it is dropped, and so is a \r ending
// the input; empty lines are skipped but counted.
type lineSplitter struct {
	src    io.Reader
	buf    []byte
	pos    int   // next unconsumed byte of buf
	end    int   // bytes of buf holding input
	srcErr error // the error src returned (io.EOF at the end), once it has
	line   int   // lines consumed
	offset int64 // bytes consumed
	// keep stops fill from dropping consumed bytes, while the header may
	// still have to be read again from its first byte.
	keep bool
	// sep separates fields; ws says that sep is ' ' and stands for runs of
	// spaces and tabs, with those at a line's ends ignored: such lines are
	// stored with single spaces, and lines with a quote split by splitWS,
	// as are all lines once wsQuoted is set (the tests' reference).
	sep        byte
	ws         bool
	wsQuoted   bool
	headerLine int // line of the column-name record

	// Once a line with a quote was seen, cr reads the rest of the input;
	// its line numbers and offsets count from lineBase and offsetBase.
	cr         *csv.Reader
	lineBase   int
	offsetBase int64
}

const splitBufBytes = 1 << 20

func newLineSplitter(src io.Reader) *lineSplitter {
	return &lineSplitter{src: src, buf: make([]byte, splitBufBytes), sep: ','}
}

func (s *lineSplitter) setSep(sep byte) { s.sep, s.ws = sep, sep == ' ' }

// readPreamble consumes the lines from the first that start with comment
// and returns copies of their contents.
func (s *lineSplitter) readPreamble(comment byte) ([][]byte, error) {
	var lines [][]byte
	for {
		raw, err := s.peekLine()
		if err == io.EOF || len(raw) == 0 || raw[0] != comment {
			return lines, nil
		}
		if err != nil {
			return lines, err
		}
		lines = append(lines, append([]byte(nil), s.consume(raw)...))
	}
}

// peekLine returns the next physical line, with its \n when it has one, and
// the read error met before the line ended (io.EOF only when no byte is
// left). The line stays valid until the next call.
func (s *lineSplitter) peekLine() ([]byte, error) {
	scanned := 0
	for {
		if i := bytes.IndexByte(s.buf[s.pos+scanned:s.end], '\n'); i >= 0 {
			return s.buf[s.pos : s.pos+scanned+i+1], nil
		}
		scanned = s.end - s.pos
		if s.srcErr != nil {
			if scanned == 0 && s.srcErr == io.EOF {
				return nil, io.EOF
			}
			if s.srcErr == io.EOF {
				return s.buf[s.pos:s.end], nil
			}
			return s.buf[s.pos:s.end], s.srcErr
		}
		s.fill()
	}
}

// fill reads more input, moving the unconsumed bytes to the front of buf
// and growing it when a line is longer than buf.
func (s *lineSplitter) fill() {
	if s.pos > 0 && !s.keep {
		s.end = copy(s.buf, s.buf[s.pos:s.end])
		s.pos = 0
	}
	if s.end == len(s.buf) {
		s.buf = append(s.buf, make([]byte, len(s.buf))...)
	}
	for s.srcErr == nil {
		n, err := s.src.Read(s.buf[s.end:])
		s.end += n
		if err != nil {
			s.srcErr = err
		}
		if n > 0 {
			return
		}
	}
}

// consume moves past a line returned by peekLine and returns its content:
// without the \n, and without one \r before it (encoding/csv turns \r\n
// into \n and drops a \r that ends the input).
func (s *lineSplitter) consume(raw []byte) []byte {
	s.pos += len(raw)
	s.line++
	s.offset += int64(len(raw))
	c := raw
	if n := len(c); n > 0 && c[n-1] == '\n' {
		c = c[:n-1]
	}
	if n := len(c); n > 0 && c[n-1] == '\r' {
		c = c[:n-1]
	}
	return c
}

// handOver gives the unconsumed input to an encoding/csv Reader, which reads
// every later record.
func (s *lineSplitter) handOver() {
	if s.ws {
		s.wsQuoted = true
		return
	}
	rest := io.Reader(bytes.NewReader(s.buf[s.pos:s.end]))
	switch {
	case s.srcErr == nil:
		rest = io.MultiReader(rest, s.src)
	case s.srcErr != io.EOF:
		rest = io.MultiReader(rest, errReader{s.srcErr})
	}
	s.cr = csv.NewReader(rest)
	s.cr.Comma = rune(s.sep)
	s.cr.ReuseRecord = true
	s.cr.FieldsPerRecord = -1
	s.lineBase, s.offsetBase = s.line, s.offset
}

type errReader struct{ err error }

func (e errReader) Read([]byte) (int, error) { return 0, e.err }

// readHeader returns the first record. A header line with a quote, or one
// cut short by a read error, is read by encoding/csv from the start of the
// input, so every header error is its error.
func (s *lineSplitter) readHeader() ([]string, error) {
	if s.ws {
		return s.readHeaderWS()
	}
	s.keep = true
	defer func() { s.keep = false }()
	pos, line, offset := s.pos, s.line, s.offset
	for s.cr == nil {
		raw, err := s.peekLine()
		if err == nil && bytes.IndexByte(raw, '"') < 0 {
			if c := s.consume(raw); len(c) > 0 {
				s.headerLine = s.line
				return strings.Split(string(c), string(s.sep)), nil
			}
			continue
		}
		// Start over from the header's first byte; only empty lines were
		// consumed since.
		s.pos, s.line, s.offset = pos, line, offset
		s.handOver()
		break
	}
	rec, err := s.cr.Read()
	if err != nil {
		return rec, err
	}
	l, _ := s.cr.FieldPos(0)
	s.headerLine = s.lineBase + l
	return append([]string(nil), rec...), nil
}

func (s *lineSplitter) readHeaderWS() ([]string, error) {
	for {
		raw, err := s.peekLine()
		if err != nil {
			return nil, err
		}
		c := trimWS(s.consume(raw))
		if len(c) == 0 {
			continue
		}
		s.headerLine = s.line
		rec, pe := s.splitWS(c, nil)
		if pe != nil {
			return nil, pe
		}
		return rec, nil
	}
}

// fillBatch reads up to batchRows records into b and reports whether the
// input has ended.
func (s *lineSplitter) fillBatch(name string, b *batch) (eof bool) {
	for len(b.rows) < batchRows {
		if s.cr != nil {
			return s.fillBatchCSV(name, b)
		}
		raw, err := s.peekLine()
		if err == io.EOF {
			return true
		}
		if !s.ws && bytes.IndexByte(raw, '"') >= 0 {
			s.handOver()
			continue
		}
		if err != nil {
			b.fatal = readError(name, err)
			return true
		}
		c := s.consume(raw)
		if s.ws {
			s.addWS(c, b)
			continue
		}
		if len(c) == 0 {
			continue // encoding/csv skips empty lines too
		}
		start := len(b.text)
		b.text = append(b.text, c...)
		b.rows = append(b.rows, rowRef{start: start, end: len(b.text), line: s.line, offset: s.offset, plain: true})
	}
	return false
}

func (s *lineSplitter) fillBatchCSV(name string, b *batch) (eof bool) {
	cr := s.cr
	for len(b.rows) < batchRows {
		rec, err := cr.Read()
		if err == io.EOF {
			return true
		}
		ref := rowRef{start: len(b.fields)}
		if err != nil {
			var pe *csv.ParseError
			if !errors.As(err, &pe) {
				b.fatal = readError(name, err)
				return true
			}
			moved := *pe
			moved.StartLine += s.lineBase
			moved.Line += s.lineBase
			ref.parseErr = &moved
			ref.line = moved.StartLine
		} else {
			ref.line, _ = cr.FieldPos(0)
			ref.line += s.lineBase
			b.fields = append(b.fields, rec...)
		}
		ref.end = len(b.fields)
		ref.offset = s.offsetBase + cr.InputOffset()
		b.rows = append(b.rows, ref)
	}
	return false
}

func readError(name string, err error) error {
	return catalog.WrapFileError(name, 0, "read error: ", catalog.ErrUnreadable, err)
}

// parseDecimal converts b when it is all a plain decimal for scanDecimal.
func parseDecimal(b []byte) (float64, bool) {
	v, end, ok := scanDecimal(b, 0)
	return v, ok && end == len(b)
}

// scanDecimal reads text of the form [+-]digits[.digits] from b[pos:] up to
// the first other byte, at end. It reports ok when that text has at least
// one digit, at most 19 bytes, and its digits as an integer m are below
// 2^53. Then m and 10^k (k <= 18 digits after the point) are exact float64
// values and one IEEE division gives the correctly rounded m/10^k, which is
// what strconv.ParseFloat returns as well (the exact fast path of Clinger
// 1990, Proc. ACM SIGPLAN PLDI '90, p. 92). Anything else is left to
// strconv.ParseFloat.
func scanDecimal(b []byte, pos int) (v float64, end int, ok bool) {
	i := pos
	neg := false
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	var m uint64 // wraps for long texts, which are refused below
	start, dot := i, -1
	for ; i < len(b); i++ {
		d := b[i] - '0'
		if d <= 9 {
			m = m*10 + uint64(d)
			continue
		}
		if b[i] != '.' || dot >= 0 {
			break
		}
		dot = i
	}
	nd := i - start // digits, plus the point if there is one
	if dot >= 0 {
		nd--
	}
	if nd == 0 || i-pos > 19 || m >= 1<<53 {
		return 0, i, false
	}
	f := float64(m)
	if dot >= 0 {
		f /= pow10[i-1-dot]
	}
	if neg {
		f = -f
	}
	return f, i, true
}

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// isWS says whether c separates fields in whitespace mode.
func isWS(c byte) bool { return c == ' ' || c == '\t' }

func trimWS(c []byte) []byte {
	for len(c) > 0 && isWS(c[0]) {
		c = c[1:]
	}
	for len(c) > 0 && isWS(c[len(c)-1]) {
		c = c[:len(c)-1]
	}
	return c
}

// addWS adds the line c, just consumed, to b in whitespace mode: a
// quote-free line as a plain row with its fields one space apart, any
// other through splitWS. Blank lines are skipped.
func (s *lineSplitter) addWS(c []byte, b *batch) {
	c = trimWS(c)
	if len(c) == 0 {
		return
	}
	line := s.line
	if s.wsQuoted || bytes.IndexByte(c, '"') >= 0 {
		ref := rowRef{start: len(b.fields), line: line}
		rec, pe := s.splitWS(c, b.fields)
		if pe != nil {
			ref.parseErr = pe
			rec = b.fields
		}
		b.fields = rec
		ref.end, ref.offset = len(b.fields), s.offset
		b.rows = append(b.rows, ref)
		return
	}
	start := len(b.text)
	for i := 0; i < len(c); {
		j := i
		for j < len(c) && !isWS(c[j]) {
			j++
		}
		if i > 0 {
			b.text = append(b.text, ' ')
		}
		b.text = append(b.text, c[i:j]...)
		for i = j; i < len(c) && isWS(c[i]); i++ {
		}
	}
	b.rows = append(b.rows, rowRef{start: start, end: len(b.text), line: line, offset: s.offset, plain: true})
}

// splitWS appends to dst the fields of the record that starts with line c
// (consumed, trimmed of whitespace), for whitespace mode: fields are
// separated by runs of spaces and tabs; a field that starts with a double
// quote runs to the next lone quote, "" standing for one quote, and takes
// the following lines while the quote is open. A quote anywhere else, or
// a closing quote not followed by whitespace, is an error, worded as
// encoding/csv words it.
func (s *lineSplitter) splitWS(c []byte, dst []string) ([]string, *csv.ParseError) {
	start := s.line
	bad := func(col int, err error) ([]string, *csv.ParseError) {
		return dst, &csv.ParseError{StartLine: start, Line: s.line, Column: col + 1, Err: err}
	}
	var field []byte
	i := 0
	for {
		for i < len(c) && isWS(c[i]) {
			i++
		}
		if i == len(c) {
			return dst, nil
		}
		if c[i] != '"' {
			j := i
			for j < len(c) && !isWS(c[j]) {
				if c[j] == '"' {
					return bad(j, csv.ErrBareQuote)
				}
				j++
			}
			dst = append(dst, string(c[i:j]))
			i = j
			continue
		}
		field = field[:0]
		i++
		for {
			j := bytes.IndexByte(c[i:], '"')
			if j < 0 {
				field = append(field, c[i:]...)
				raw, err := s.peekLine()
				if err != nil {
					return bad(len(c), csv.ErrQuote)
				}
				field = append(field, '\n')
				c, i = s.consume(raw), 0
				continue
			}
			field = append(field, c[i:i+j]...)
			i += j + 1
			if i < len(c) && c[i] == '"' {
				field = append(field, '"')
				i++
				continue
			}
			break
		}
		if i < len(c) && !isWS(c[i]) {
			return bad(i, csv.ErrQuote)
		}
		dst = append(dst, string(field))
	}
}
