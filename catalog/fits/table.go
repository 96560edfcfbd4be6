package fitscat

import (
	"encoding/binary"
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"
)

// column is one field of a binary table row (FITS Standard 4.0, section
// 7.3.2 and 7.3.3).
type column struct {
	name, unit, ucd string
	form            string // TFORMn as written
	code            byte   // L X B I J K A E D C M P Q
	repeat          int64
	width           int // bytes in a row
	offset          int // byte offset in a row
	scale, zero     float64
	scaled          bool // TSCALn or TZEROn other than 1 and 0
	zeroText        string
	zeroInt         int64 // TZEROn when an integer of at most 62 bits, so adding a B, I or J value cannot overflow
	zeroIntOK       bool
	// unsigned: TZEROn is the offset that stores unsigned integers in a
	// signed type (section 7.3.2, table 19): 32768 for I, 2147483648 for J,
	// 9223372036854775808 for K, with TSCALn 1; -128 for signed bytes in B.
	unsigned bool
	null     int64 // TNULLn, the stored integer that means null
	hasNull  bool
}

// table is a BINTABLE header resolved: the row layout and the data sizes.
type table struct {
	rowBytes int64 // NAXIS1
	rows     int64 // NAXIS2
	heap     int64 // PCOUNT: bytes after the rows (gap and heap)
	cols     []column
}

// maxRowBytes bounds NAXIS1: a reader buffers at least one whole row.
const maxRowBytes = 1 << 24

// elemBytes is the width of one element of each TFORM type code (section
// 7.3.3.1, table 18); X is counted in bits.
var elemBytes = map[byte]int64{'L': 1, 'X': 1, 'B': 1, 'I': 2, 'J': 4, 'K': 8, 'A': 1, 'E': 4, 'D': 8, 'C': 8, 'M': 16, 'P': 8, 'Q': 16}

// parseTFORM reads rT(a): an optional repeat count, a type code, and for P
// and Q the element type and maximum length, which a reader that skips the
// heap does not need.
func parseTFORM(s string) (code byte, repeat, width int64, err error) {
	t := strings.TrimSpace(s)
	i := 0
	for i < len(t) && t[i] >= '0' && t[i] <= '9' {
		i++
	}
	repeat = 1
	if i > 0 {
		if repeat, err = strconv.ParseInt(t[:i], 10, 64); err != nil || repeat > maxRowBytes*8 {
			return 0, 0, 0, fmt.Errorf("bad TFORM %q: repeat count", s)
		}
	}
	if i >= len(t) {
		return 0, 0, 0, fmt.Errorf("bad TFORM %q: no type code", s)
	}
	code = t[i]
	eb, ok := elemBytes[code]
	if !ok {
		return 0, 0, 0, fmt.Errorf("bad TFORM %q: unknown type code %q", s, code)
	}
	rest := t[i+1:]
	switch code {
	case 'P', 'Q':
		if repeat > 1 {
			return 0, 0, 0, fmt.Errorf("bad TFORM %q: a heap descriptor repeats at most once", s)
		}
		if rest == "" || !strings.ContainsRune("LXBIJKAEDCM", rune(rest[0])) {
			return 0, 0, 0, fmt.Errorf("bad TFORM %q: heap descriptor without element type", s)
		}
	case 'A':
		// rAw: w is a substring width (section 7.3.3.1, common practice).
	default:
		if rest != "" {
			return 0, 0, 0, fmt.Errorf("bad TFORM %q: characters after the type code", s)
		}
	}
	if code == 'X' {
		return code, repeat, (repeat + 7) / 8, nil
	}
	return code, repeat, repeat * eb, nil
}

// parseTable reads the binary-table keywords of h (section 7.3.1 and
// 7.3.2).
func parseTable(h *header) (*table, error) {
	t := &table{}
	var err error
	var ok bool
	if t.rowBytes, ok, err = h.integer("NAXIS1"); err != nil || !ok || t.rowBytes < 0 || t.rowBytes > maxRowBytes {
		return nil, fmt.Errorf("NAXIS1 missing, negative or over %d bytes", maxRowBytes)
	}
	if t.rows, ok, err = h.integer("NAXIS2"); err != nil || !ok || t.rows < 0 {
		return nil, fmt.Errorf("NAXIS2 missing or negative")
	}
	if t.heap, _, err = h.integer("PCOUNT"); err != nil || t.heap < 0 {
		return nil, fmt.Errorf("PCOUNT negative or not an integer")
	}
	if n, _, err := h.integer("NAXIS"); err != nil || n != 2 {
		return nil, fmt.Errorf("NAXIS must be 2 in a binary table")
	}
	if g, ok, err := h.integer("GCOUNT"); err != nil || ok && g != 1 {
		return nil, fmt.Errorf("GCOUNT must be 1 in a binary table")
	}
	if b, _, err := h.integer("BITPIX"); err != nil || b != 8 {
		return nil, fmt.Errorf("BITPIX must be 8 in a binary table")
	}
	if _, err := mulBytes(t.rowBytes, t.rows); err != nil {
		return nil, err
	}
	nf, ok, err := h.integer("TFIELDS")
	if err != nil || !ok || nf < 0 || nf > 999 {
		return nil, fmt.Errorf("TFIELDS missing or outside 0..999")
	}
	off := int64(0)
	for i := 1; i <= int(nf); i++ {
		n := strconv.Itoa(i)
		c := column{name: strings.TrimSpace(h.str("TTYPE" + n)), unit: strings.TrimSpace(h.str("TUNIT" + n)),
			ucd: strings.TrimSpace(h.str("TUCD" + n)), form: h.str("TFORM" + n), scale: 1}
		if c.name == "" {
			c.name = "col" + n // an unnamed field: named by its number so errors can point at it
		}
		if _, ok := h.card("TFORM" + n); !ok {
			return nil, fmt.Errorf("column %d (%s): TFORM%s missing", i, c.name, n)
		}
		var w int64
		if c.code, c.repeat, w, err = parseTFORM(c.form); err != nil {
			return nil, fmt.Errorf("column %d (%s): %w", i, c.name, err)
		}
		c.offset, c.width = int(off), int(w)
		if off += w; off > t.rowBytes {
			return nil, fmt.Errorf("column %d (%s): TFORMs need more than NAXIS1 = %d bytes a row", i, c.name, t.rowBytes)
		}
		if err := c.scaling(h, n); err != nil {
			return nil, fmt.Errorf("column %d (%s): %w", i, c.name, err)
		}
		t.cols = append(t.cols, c)
	}
	if off != t.rowBytes {
		return nil, fmt.Errorf("TFORMs add up to %d bytes a row, NAXIS1 says %d", off, t.rowBytes)
	}
	return t, nil
}

// scaling reads TSCALn, TZEROn and TNULLn.
func (c *column) scaling(h *header, n string) error {
	var err error
	var hasScale, hasZero bool
	if c.scale, hasScale, err = h.float("TSCAL" + n); err != nil {
		return err
	}
	if !hasScale {
		c.scale = 1
	}
	if c.zero, hasZero, err = h.float("TZERO" + n); err != nil {
		return err
	}
	if hasZero {
		zc, _ := h.card("TZERO" + n)
		c.zeroText = strings.TrimPrefix(zc.value, "+")
		if z, err := strconv.ParseInt(c.zeroText, 10, 64); err == nil && z > -1<<62 && z < 1<<62 {
			c.zeroInt, c.zeroIntOK = z, true
		}
	}
	c.scaled = c.scale != 1 || c.zero != 0
	if c.scale == 1 && hasZero {
		switch c.code {
		case 'B':
			c.unsigned = c.zero == -128
		case 'I':
			c.unsigned = c.zero == 32768
		case 'J':
			c.unsigned = c.zero == 2147483648
		case 'K':
			u, err := strconv.ParseUint(c.zeroText, 10, 64)
			c.unsigned = err == nil && u == 1<<63 || err != nil && c.zero == 1<<63 && !isInteger(c.zeroText)
		}
	}
	var has bool
	if c.null, has, err = h.integer("TNULL" + n); err != nil {
		return err
	}
	c.hasNull = has && strings.ContainsRune("BIJK", rune(c.code))
	return nil
}

func isInteger(s string) bool {
	s = strings.TrimPrefix(strings.TrimPrefix(s, "-"), "+")
	return s != "" && strings.Trim(s, "0123456789") == ""
}

// raw is the stored integer of a B, I, J or K cell, before scaling.
func (c *column) raw(b []byte) int64 {
	switch c.code {
	case 'B':
		return int64(b[0])
	case 'I':
		return int64(int16(binary.BigEndian.Uint16(b)))
	case 'J':
		return int64(int32(binary.BigEndian.Uint32(b)))
	default:
		return int64(binary.BigEndian.Uint64(b))
	}
}

// number is the physical value of a scalar numeric cell, NaN for null: a
// stored integer equal to TNULLn (compared before scaling, section
// 7.3.2), or a floating-point NaN (section 5.3).
func (c *column) number(b []byte) float64 {
	var v float64
	switch c.code {
	case 'E':
		v = float64(math.Float32frombits(binary.BigEndian.Uint32(b)))
	case 'D':
		v = math.Float64frombits(binary.BigEndian.Uint64(b))
	default:
		r := c.raw(b)
		if c.hasNull && r == c.null {
			return math.NaN()
		}
		if c.unsigned && c.code == 'K' {
			return float64(uint64(r) ^ 1<<63) // one rounding, no overflow
		}
		v = float64(r)
	}
	if c.scaled {
		v = v*c.scale + c.zero
	}
	return v
}

// exactInt says whether an integer column's physical values are integers
// (TSCALn 1, TZEROn an integer), so that appendIntText can write them.
func (c *column) exactInt() bool {
	return strings.ContainsRune("BIJK", rune(c.code)) && c.scale == 1 && (c.zero == 0 || c.unsigned || isInteger(c.zeroText))
}

// appendIntText appends the decimal text of an integer cell's physical
// value, exact, and reports false for null.
func (c *column) appendIntText(dst, b []byte) ([]byte, bool) {
	r := c.raw(b)
	if c.hasNull && r == c.null {
		return dst, false
	}
	switch {
	case c.code == 'K' && c.unsigned:
		return strconv.AppendUint(dst, uint64(r)^1<<63, 10), true
	case c.zero == 0:
		return strconv.AppendInt(dst, r, 10), true
	case c.zeroIntOK && c.code != 'K':
		return strconv.AppendInt(dst, r+c.zeroInt, 10), true
	}
	z, ok := new(big.Int).SetString(c.zeroText, 10)
	if !ok {
		z, _ = new(big.Float).SetFloat64(c.zero).Int(nil)
	}
	return z.Add(z, big.NewInt(r)).Append(dst, 10), true
}

// appendString appends a character cell: its bytes up to the first NUL
// (section 7.3.3.1), without trailing blanks.
func appendString(dst, b []byte) []byte {
	for i, x := range b {
		if x == 0 {
			b = b[:i]
			break
		}
	}
	for len(b) > 0 && b[len(b)-1] == ' ' {
		b = b[:len(b)-1]
	}
	return append(dst, b...)
}

// text is a cell as people read it, for the rows set aside: numbers
// scaled, arrays space-separated, a heap descriptor as (count,offset).
func (c *column) text(b []byte) string {
	switch c.code {
	case 'A':
		return string(appendString(nil, b))
	case 'X':
		var sb strings.Builder
		for i := int64(0); i < c.repeat; i++ {
			sb.WriteByte('0' + b[i/8]>>(7-i%8)&1)
		}
		return sb.String()
	case 'P', 'Q':
		h := c.width / 2
		var n, off uint64
		if c.code == 'P' {
			n, off = uint64(binary.BigEndian.Uint32(b)), uint64(binary.BigEndian.Uint32(b[h:]))
		} else {
			n, off = binary.BigEndian.Uint64(b), binary.BigEndian.Uint64(b[h:])
		}
		return fmt.Sprintf("(%d,%d)", n, off)
	}
	eb := int(elemBytes[c.code])
	parts := make([]string, 0, c.repeat)
	for i := 0; i+eb <= len(b); i += eb {
		e := b[i : i+eb]
		switch c.code {
		case 'L':
			parts = append(parts, map[byte]string{'T': "T", 'F': "F"}[e[0]])
		case 'C':
			parts = append(parts, fmt.Sprintf("(%g,%g)", math.Float32frombits(binary.BigEndian.Uint32(e)), math.Float32frombits(binary.BigEndian.Uint32(e[4:]))))
		case 'M':
			parts = append(parts, fmt.Sprintf("(%g,%g)", math.Float64frombits(binary.BigEndian.Uint64(e)), math.Float64frombits(binary.BigEndian.Uint64(e[8:]))))
		case 'B', 'I', 'J', 'K':
			if !c.exactInt() {
				parts = append(parts, strconv.FormatFloat(c.number(e), 'g', -1, 64))
			} else if s, ok := c.appendIntText(nil, e); ok {
				parts = append(parts, string(s))
			} else {
				parts = append(parts, "")
			}
		default:
			parts = append(parts, strconv.FormatFloat(c.number(e), 'g', -1, 64))
		}
	}
	return strings.Join(parts, " ")
}

// datatype is the column's type as ColumnMeta gives it: the TFORM.
func (c *column) datatype() string { return strings.TrimSpace(c.form) }
