package fitscat

import (
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
	"strings"

	"starvet/catalog"
)

// WriteTable writes t as a FITS file (FITS Standard 4.0): a primary HDU
// with no data, then one BINTABLE extension named t.Name (EXTNAME). Float
// columns are D with NaN as null, Int columns K with TNULLn =
// catalog.OutNullInt, Text columns nA with n the longest value (NUL
// padded, "" null); TUNITn carries the unit in FITS spelling, TUCDn the
// UCD, and the TTYPEn comment the description, cut to fit the card. Rows
// are streamed; a name ending in .gz is gzipped.
func WriteTable(path string, t *catalog.OutTable) error {
	hdr, rowBytes, err := writeHeaders(t)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	o, err := catalog.OutCreate(path)
	if err != nil {
		return err
	}
	o.Write(hdr)
	row := make([]byte, rowBytes)
	for i := range t.Len() {
		off := 0
		for j := range t.Columns {
			c := &t.Columns[j]
			switch {
			case c.Float != nil:
				v := c.Float[i]
				bits := math.Float64bits(v)
				if math.IsNaN(v) {
					bits = 0x7ff8000000000000 // one quiet NaN for every null
				}
				binary.BigEndian.PutUint64(row[off:], bits)
				off += 8
			case c.Int != nil:
				binary.BigEndian.PutUint64(row[off:], uint64(c.Int[i]))
				off += 8
			default:
				w := writeTextWidth(c)
				s := c.Text[i]
				if err := writeCheckASCII(s); err != nil {
					o.Abort()
					return fmt.Errorf("%s: column %q, row %d: %w; write VOTable or ECSV for such text", path, c.Name, i+1, err)
				}
				// a shorter string ends at a NUL (section 7.3.3.1); NUL
				// padding, unlike blanks, keeps trailing blanks of the
				// value and reads back as the string itself
				n := copy(row[off:off+w], s)
				clear(row[off+n : off+w])
				off += w
			}
		}
		if _, err := o.Write(row); err != nil {
			o.Abort()
			return fmt.Errorf("%s: %w", path, err)
		}
	}
	if pad := writePad(int64(rowBytes) * int64(t.Len())); pad > 0 {
		o.Write(make([]byte, pad)) // data is padded with zeros (section 3.3.2)
	}
	return o.Close()
}

// writeTextWidth is the byte width of a Text column: its longest value,
// at least 1.
func writeTextWidth(c *catalog.OutColumn) int {
	w := 1
	for _, s := range c.Text {
		w = max(w, len(s))
	}
	return w
}

func writeCheckASCII(s string) error {
	for i := 0; i < len(s); i++ {
		if s[i] < 0x20 || s[i] > 0x7e {
			return fmt.Errorf("byte %#02x in %q is not printable ASCII, which FITS character columns hold (section 7.3.3.1)", s[i], s)
		}
	}
	return nil
}

// writePad is how many bytes bring n to a multiple of 2880.
func writePad(n int64) int64 { return (2880 - n%2880) % 2880 }

// writeHeaders is the primary header and the table header, each padded
// to 2880 bytes, and the row width.
func writeHeaders(t *catalog.OutTable) ([]byte, int, error) {
	if err := t.Check(); err != nil {
		return nil, 0, err
	}
	if len(t.Columns) > 999 {
		return nil, 0, fmt.Errorf("%d columns: a binary table holds at most 999", len(t.Columns))
	}
	var b writeCards
	b.logical("SIMPLE", true, "conforms to FITS Standard 4.0")
	b.integer("BITPIX", 8, "")
	b.integer("NAXIS", 0, "no primary data")
	b.logical("EXTEND", true, "a table extension follows")
	b.end()
	rowBytes := 0
	forms := make([]string, len(t.Columns))
	for j := range t.Columns {
		c := &t.Columns[j]
		switch c.Kind() {
		case catalog.OutFloat:
			forms[j], rowBytes = "D", rowBytes+8
		case catalog.OutInt:
			forms[j], rowBytes = "K", rowBytes+8
		default:
			w := writeTextWidth(c)
			forms[j], rowBytes = strconv.Itoa(w)+"A", rowBytes+w
		}
	}
	b.str("XTENSION", "BINTABLE", "binary table extension")
	b.integer("BITPIX", 8, "")
	b.integer("NAXIS", 2, "")
	b.integer("NAXIS1", int64(rowBytes), "bytes a row")
	b.integer("NAXIS2", int64(t.Len()), "rows")
	b.integer("PCOUNT", 0, "no heap")
	b.integer("GCOUNT", 1, "")
	b.integer("TFIELDS", int64(len(t.Columns)), "columns")
	for j := range t.Columns {
		c := &t.Columns[j]
		n := strconv.Itoa(j + 1)
		b.str("TTYPE"+n, c.Name, c.Description)
		b.str("TFORM"+n, forms[j], "")
		if c.Unit != "" {
			b.str("TUNIT"+n, catalog.OutUnitFITS(c.Unit), "")
		}
		if c.UCD != "" {
			b.str("TUCD"+n, c.UCD, "")
		}
		if c.Int != nil {
			b.integer("TNULL"+n, catalog.OutNullInt, "null")
		}
	}
	if t.Name != "" {
		b.str("EXTNAME", t.Name, "")
	}
	b.end()
	return b.buf, rowBytes, b.err
}

// writeCards builds header cards of 80 characters (section 4.1).
type writeCards struct {
	buf []byte
	err error
}

// card writes a fixed-format value (section 4.2: value indicator in
// columns 9-10, a number right-justified to column 30) and a comment cut
// to fit.
func (b *writeCards) card(key, value, comment string) {
	s := fmt.Sprintf("%-8s= %s", key, value)
	if len(s) > 80 && b.err == nil {
		b.err = fmt.Errorf("%s: value %s does not fit a header card", key, value)
		return
	}
	if comment != "" && len(s)+3 < 80 {
		s += " / " + writeCleanComment(comment)
	}
	if len(s) > 80 {
		s = s[:80]
	}
	b.buf = append(b.buf, fmt.Sprintf("%-80s", s)...)
}

func (b *writeCards) logical(key string, v bool, comment string) {
	b.card(key, fmt.Sprintf("%20s", map[bool]string{true: "T", false: "F"}[v]), comment)
}

func (b *writeCards) integer(key string, v int64, comment string) {
	b.card(key, fmt.Sprintf("%20d", v), comment)
}

// str writes a string value: quoted, quotes doubled, at least 8
// characters between the quotes (section 4.2.1.1).
func (b *writeCards) str(key, v, comment string) {
	if err := writeCheckASCII(v); err != nil && b.err == nil {
		b.err = fmt.Errorf("%s: %w", key, err)
		return
	}
	b.card(key, "'"+fmt.Sprintf("%-8s", strings.ReplaceAll(v, "'", "''"))+"'", comment)
}

// end writes END and blank cards to the end of the 2880-byte block.
func (b *writeCards) end() {
	b.buf = append(b.buf, fmt.Sprintf("%-80s", "END")...)
	for len(b.buf)%2880 != 0 {
		b.buf = append(b.buf, ' ')
	}
}

// writeCleanComment keeps a comment printable ASCII.
func writeCleanComment(s string) string {
	return strings.Map(func(r rune) rune {
		if r < 0x20 || r > 0x7e {
			return '?'
		}
		return r
	}, s)
}
