package votable

import (
	"encoding/base64"
	"encoding/binary"
	"encoding/xml"
	"fmt"
	"io"
	"math"
	"strings"
	"unicode/utf16"
	"unicode/utf8"

	"starvet/catalog"
)

// WriteTable writes t as an IVOA VOTable 1.4 document holding one TABLE:
// a FIELD per column (name, datatype double, long, char or, for text
// that is not ASCII, unicodeChar with arraysize="*"; unit in VOUnits
// spelling; ucd; DESCRIPTION), then the rows as TABLEDATA (a null cell is
// an empty TD) or, when binary2, as a base64 BINARY2 stream, each row led
// by its null bitmask.
func WriteTable(path string, t *catalog.OutTable, binary2 bool) error {
	if err := t.Check(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	types := make([]string, len(t.Columns))
	for j := range t.Columns {
		c := &t.Columns[j]
		switch c.Kind() {
		case catalog.OutFloat:
			types[j] = "double"
		case catalog.OutInt:
			types[j] = "long"
		default:
			types[j] = "char"
			for i, s := range c.Text {
				if !writeASCII(s) {
					types[j] = "unicodeChar"
				}
				if err := writeCheckText(s); err != nil {
					return fmt.Errorf("%s: column %q, row %d: %w", path, c.Name, i+1, err)
				}
			}
		}
	}
	o, err := catalog.OutCreate(path)
	if err != nil {
		return err
	}
	fmt.Fprintf(o, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n")
	fmt.Fprintf(o, "<VOTABLE version=\"1.4\" xmlns=\"http://www.ivoa.net/xml/VOTable/v1.3\">\n")
	fmt.Fprintf(o, "<RESOURCE type=\"results\">\n<TABLE%s nrows=\"%d\">\n", writeAttr("name", t.Name), t.Len())
	for j := range t.Columns {
		c := &t.Columns[j]
		fmt.Fprintf(o, "<FIELD%s datatype=\"%s\"", writeAttr("name", c.Name), types[j])
		if c.Text != nil {
			fmt.Fprint(o, ` arraysize="*"`)
		}
		fmt.Fprint(o, writeAttr("unit", c.Unit), writeAttr("ucd", c.UCD))
		if c.Description == "" {
			fmt.Fprint(o, "/>\n")
		} else {
			fmt.Fprintf(o, "><DESCRIPTION>%s</DESCRIPTION></FIELD>\n", writeEscape(c.Description))
		}
	}
	fmt.Fprint(o, "<DATA>\n")
	if binary2 {
		err = writeBinary2(o, t, types)
	} else {
		err = writeTableData(o, t)
	}
	if err != nil {
		o.Abort()
		return fmt.Errorf("%s: %w", path, err)
	}
	fmt.Fprint(o, "</DATA>\n</TABLE>\n</RESOURCE>\n</VOTABLE>\n")
	return o.Close()
}

func writeTableData(w io.Writer, t *catalog.OutTable) error {
	io.WriteString(w, "<TABLEDATA>\n")
	var line []byte
	for i := range t.Len() {
		line = append(line[:0], "<TR>"...)
		for j := range t.Columns {
			c := &t.Columns[j]
			s := c.OutText(i) // "" for null: an empty TD; infinities are +Inf and -Inf
			if s == "" {
				line = append(line, "<TD/>"...)
				continue
			}
			line = append(line, "<TD>"...)
			line = append(line, writeEscape(s)...)
			line = append(line, "</TD>"...)
		}
		line = append(line, "</TR>\n"...)
		if _, err := w.Write(line); err != nil {
			return err
		}
	}
	_, err := io.WriteString(w, "</TABLEDATA>\n")
	return err
}

// writeBinary2 writes the BINARY2 stream: per row a bitmask with one bit
// a column, most significant bit of the first byte first, set for null;
// then the cells, big-endian: double and long 8 bytes (a null double is
// NaN, a null long 0), variable-length text a 4-byte count of characters
// and the characters (unicodeChar as UCS-2).
func writeBinary2(w io.Writer, t *catalog.OutTable, types []string) error {
	io.WriteString(w, "<BINARY2>\n<STREAM encoding=\"base64\">\n")
	lw := &writeLines{w: w}
	enc := base64.NewEncoder(base64.StdEncoding, lw)
	mask := make([]byte, (len(t.Columns)+7)/8)
	var row []byte
	for i := range t.Len() {
		clear(mask)
		row = row[:0]
		for j := range t.Columns {
			c := &t.Columns[j]
			null := false
			switch {
			case c.Float != nil:
				v := c.Float[i]
				if null = math.IsNaN(v); null {
					v = math.NaN()
				}
				row = binary.BigEndian.AppendUint64(row, math.Float64bits(v))
			case c.Int != nil:
				v := c.Int[i]
				if null = v == catalog.OutNullInt; null {
					v = 0
				}
				row = binary.BigEndian.AppendUint64(row, uint64(v))
			case types[j] == "unicodeChar":
				s := c.Text[i]
				null = s == ""
				u := utf16.Encode([]rune(s))
				row = binary.BigEndian.AppendUint32(row, uint32(len(u)))
				for _, x := range u {
					row = binary.BigEndian.AppendUint16(row, x)
				}
			default:
				s := c.Text[i]
				null = s == ""
				row = binary.BigEndian.AppendUint32(row, uint32(len(s)))
				row = append(row, s...)
			}
			if null {
				mask[j/8] |= 0x80 >> (j % 8)
			}
		}
		enc.Write(mask)
		if _, err := enc.Write(row); err != nil {
			return err
		}
	}
	if err := enc.Close(); err != nil {
		return err
	}
	lw.finish()
	_, err := io.WriteString(w, "</STREAM>\n</BINARY2>\n")
	return err
}

// writeLines breaks base64 text into lines of 76 characters.
type writeLines struct {
	w   io.Writer
	col int
}

func (l *writeLines) Write(p []byte) (int, error) {
	n := 0
	for len(p) > 0 {
		k := min(len(p), 76-l.col)
		if _, err := l.w.Write(p[:k]); err != nil {
			return n, err
		}
		n, p, l.col = n+k, p[k:], l.col+k
		if l.col == 76 {
			if _, err := l.w.Write([]byte{'\n'}); err != nil {
				return n, err
			}
			l.col = 0
		}
	}
	return n, nil
}

func (l *writeLines) finish() {
	if l.col > 0 {
		l.w.Write([]byte{'\n'})
		l.col = 0
	}
}

func writeASCII(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] >= 0x80 {
			return false
		}
	}
	return true
}

// writeCheckText refuses what XML 1.0 cannot carry (control characters
// other than tab, newline and carriage return) and what UCS-2 cannot
// (characters beyond U+FFFF).
func writeCheckText(s string) error {
	if !utf8.ValidString(s) {
		return fmt.Errorf("%q is not UTF-8", s)
	}
	for _, r := range s {
		if r < 0x20 && r != '\t' && r != '\n' && r != '\r' || r > 0xffff {
			return fmt.Errorf("character %U in %q cannot be written in a VOTable char or unicodeChar cell", r, s)
		}
	}
	return nil
}

// writeAttr is ` key="value"`, escaped, or "" for an empty value.
func writeAttr(key, value string) string {
	if value == "" {
		return ""
	}
	return " " + key + "=\"" + writeEscape(value) + "\""
}

func writeEscape(s string) string {
	var b strings.Builder
	xml.EscapeText(&b, []byte(s))
	return b.String()
}
