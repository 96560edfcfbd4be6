package votable

import (
	"bufio"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// scanner walks a VOTable document token by token (encoding/xml's
// Decoder.Token, never a tree). Binary STREAM text is not handed to
// encoding/xml, which would buffer it whole: the scanner reads it from
// the same bufio.Reader (see b64Stream), then lets the decoder go on.
type scanner struct {
	br  *bufio.Reader
	tr  *lastBytes
	dec *xml.Decoder

	want    string // Spec.Table
	tables  []string
	coosys  map[string]string // COOSYS ID -> epoch
	epochs  []string          // every COOSYS epoch, in document order
	status  string            // INFO QUERY_STATUS value, last seen
	message string            // its text

	// The selected table, once found.
	found  bool
	label  string // how messages name it
	nrows  int    // TABLE nrows, -1 when absent
	fields []*field
}

func newScanner(r io.Reader, want string) *scanner {
	br := bufio.NewReaderSize(r, 1<<20)
	tr := &lastBytes{br: br}
	dec := xml.NewDecoder(tr)
	dec.CharsetReader = func(label string, in io.Reader) (io.Reader, error) {
		switch strings.ToLower(label) {
		case "us-ascii", "ascii":
			return in, nil // a subset of UTF-8
		}
		return nil, fmt.Errorf("character encoding %q is not read (UTF-8 or US-ASCII)", label)
	}
	return &scanner{br: br, tr: tr, dec: dec, want: want, coosys: map[string]string{}, nrows: -1}
}

// lastBytes is the document's reader as encoding/xml sees it, remembering
// the last two bytes it handed over: "/>" ends an empty element, which
// Token reports as a start and an end alike.
type lastBytes struct {
	br         *bufio.Reader
	prev, last byte
}

func (l *lastBytes) ReadByte() (byte, error) {
	b, err := l.br.ReadByte()
	if err == nil {
		l.prev, l.last = l.last, b
	}
	return b, err
}

func (l *lastBytes) Read(p []byte) (int, error) {
	n, err := l.br.Read(p)
	if n > 0 {
		l.last = p[n-1]
		if n > 1 {
			l.prev = p[n-2]
		}
	}
	return n, err
}

// emptyElement says whether the start element just read was written
// "<X .../>".
func (s *scanner) emptyElement() bool { return s.tr.prev == '/' && s.tr.last == '>' }

func attrMap(se xml.StartElement) map[string]string {
	m := make(map[string]string, len(se.Attr))
	for _, a := range se.Attr {
		m[a.Name.Local] = a.Value
	}
	return m
}

// errSyntax marks a document encoding/xml could not read, or that ended
// early.
var errSyntax = errors.New("not well-formed XML")

func (s *scanner) token() (xml.Token, error) {
	t, err := s.dec.Token()
	var se *xml.SyntaxError
	if errors.As(err, &se) && se.Msg == "unexpected EOF" {
		return nil, fmt.Errorf("%w: the document ends before its elements close (line %d); the file is cut short", errSyntax, se.Line)
	}
	if err != nil && err != io.EOF {
		return nil, fmt.Errorf("%w (near byte %d): %v", errSyntax, s.dec.InputOffset(), err)
	}
	return t, err
}

// selects says whether the n-th TABLE (1-based), with these attributes,
// is the one Spec.Table asks for.
func (s *scanner) selects(n int, a map[string]string) bool {
	if s.want == "" {
		return n == 1
	}
	if k, err := strconv.Atoi(s.want); err == nil {
		return k == n
	}
	return a["name"] == s.want || a["ID"] == s.want
}

// data is what the scanner met at the selected table's DATA.
type data int

const (
	noData    data = iota // the table has no DATA: zero rows
	tableData             // TABLEDATA: rows follow as TR elements
	binary1               // BINARY STREAM: base64 follows
	binary2               // BINARY2 STREAM
)

// head scans to the selected table's data and returns its serialisation,
// positioned just inside TABLEDATA or STREAM. Tables before it are
// skipped; their streams are read through, never held.
func (s *scanner) head() (data, error) {
	var tableDepth int // >0 inside the selected TABLE
	var cur *field
	var info *strings.Builder
	var ser string
	for {
		t, err := s.token()
		if err == io.EOF {
			if s.found {
				return noData, fmt.Errorf("%w: the document ends inside the table", errSyntax)
			}
			return noData, s.noTable()
		}
		if err != nil {
			return noData, err
		}
		switch t := t.(type) {
		case xml.StartElement:
			a := attrMap(t)
			if tableDepth > 0 {
				tableDepth++
			}
			switch t.Name.Local {
			case "COOSYS":
				s.epochs = append(s.epochs, a["epoch"])
				if a["ID"] != "" {
					s.coosys[a["ID"]] = a["epoch"]
				}
			case "INFO":
				if a["name"] == "QUERY_STATUS" {
					s.status = a["value"]
					info = &strings.Builder{}
				}
			case "TABLE":
				label := a["name"]
				if label == "" {
					label = a["ID"]
				}
				if label == "" {
					label = "#" + strconv.Itoa(len(s.tables)+1)
				}
				s.tables = append(s.tables, label)
				if !s.found && s.selects(len(s.tables), a) {
					s.found, s.label, tableDepth = true, label, 1
					if n, ok := a["nrows"]; ok {
						k, err := strconv.Atoi(strings.TrimSpace(n))
						if err != nil || k < 0 {
							return noData, fmt.Errorf("TABLE nrows %q is not a row count", n)
						}
						s.nrows = k
					}
				}
			case "FIELD":
				if tableDepth == 2 {
					f, err := newField(a)
					if err != nil {
						return noData, err
					}
					s.fields = append(s.fields, f)
					cur = f
				}
			case "VALUES":
				if cur != nil && tableDepth == 3 {
					if n, ok := a["null"]; ok {
						if err := cur.setNull(n); err != nil {
							return noData, err
						}
					}
				}
			case "TABLEDATA":
				if tableDepth > 0 {
					return tableData, nil
				}
			case "BINARY", "BINARY2", "FITS":
				if tableDepth > 0 {
					ser = t.Name.Local
					if ser == "FITS" {
						return noData, fmt.Errorf("the table's data is a FITS serialisation; starvet reads TABLEDATA, BINARY and BINARY2 (convert it, or read the FITS file itself)")
					}
				}
			case "STREAM":
				if tableDepth > 0 {
					if h := a["href"]; h != "" {
						return noData, fmt.Errorf("the %s STREAM is remote (href %q); starvet reads inline streams only", ser, h)
					}
					if enc := a["encoding"]; enc != "base64" {
						return noData, fmt.Errorf("the %s STREAM has encoding %q; starvet reads base64", ser, enc)
					}
					if s.emptyElement() {
						return noData, nil // an empty stream: no rows
					}
					if ser == "BINARY2" {
						return binary2, nil
					}
					return binary1, nil
				}
				if err := s.skipStream(a); err != nil {
					return noData, err
				}
			}
		case xml.CharData:
			if info != nil {
				info.Write(t)
			}
		case xml.EndElement:
			switch t.Name.Local {
			case "FIELD":
				cur = nil
			case "INFO":
				if info != nil {
					s.message, info = strings.TrimSpace(info.String()), nil
				}
			case "TABLE":
				if tableDepth == 1 {
					return noData, nil
				}
			}
			if tableDepth > 0 {
				tableDepth--
			}
		}
	}
}

func (s *scanner) noTable() error {
	if len(s.tables) == 0 {
		return fmt.Errorf("%w: the document has no TABLE", ErrNoTable)
	}
	return fmt.Errorf("%w: no TABLE %q (tables, in order: %s)", ErrNoTable, s.want, strings.Join(s.tables, ", "))
}

// skipStream reads through the base64 text of a STREAM the reader does
// not want, in bounded memory.
func (s *scanner) skipStream(a map[string]string) error {
	if a["encoding"] != "base64" || s.emptyElement() {
		return nil // let encoding/xml read whatever it is
	}
	b := &b64Stream{br: s.br}
	buf := make([]byte, 64<<10)
	for {
		_, err := b.fill(buf)
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
	}
}

// tail reads the rest of the document after the selected table's data,
// for INFO QUERY_STATUS elements that follow the table and to be sure the
// document is whole.
func (s *scanner) tail() error {
	var info *strings.Builder
	for {
		t, err := s.token()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
		switch t := t.(type) {
		case xml.StartElement:
			a := attrMap(t)
			switch t.Name.Local {
			case "INFO":
				if a["name"] == "QUERY_STATUS" {
					s.status, info = a["value"], &strings.Builder{}
				}
			case "STREAM":
				if err := s.skipStream(a); err != nil {
					return err
				}
			}
		case xml.CharData:
			if info != nil {
				info.Write(t)
			}
		case xml.EndElement:
			if t.Name.Local == "INFO" && info != nil {
				s.message, info = strings.TrimSpace(info.String()), nil
			}
		}
	}
}

// epoch is the COOSYS epoch of the table's positions: the COOSYS the ra
// column refers to, else the only epoch in the document; "" when none
// or when several differ and none is referred to.
func (s *scanner) epoch(raCol int) string {
	if raCol >= 0 && raCol < len(s.fields) {
		if e, ok := s.coosys[s.fields[raCol].ref]; ok {
			return e
		}
	}
	e := ""
	for _, x := range s.epochs {
		if x == "" {
			continue
		}
		if e != "" && x != e {
			return ""
		}
		e = x
	}
	return e
}

// julianYear reads a COOSYS epoch: "J2015.5" or "2015.5" is a Julian year
// (VOTable 1.3, section 3.1, after the IAU's J/B prefix convention); a
// Besselian "B..." epoch is not converted and gives ok false.
func julianYear(e string) (float64, bool) {
	e = strings.TrimSpace(e)
	e = strings.TrimPrefix(e, "J")
	if e == "" || e[0] == 'B' {
		return 0, false
	}
	v, err := strconv.ParseFloat(e, 64)
	return v, err == nil
}
