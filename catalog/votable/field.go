package votable

import (
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode/utf16"
)

// kind is a FIELD's primitive datatype (VOTable 1.3, section 2.1, table 1).
type kind uint8

const (
	kBool kind = iota
	kBit
	kUByte
	kShort
	kInt
	kLong
	kChar
	kUChar
	kFloat
	kDouble
	kFComplex
	kDComplex
)

var kinds = map[string]struct {
	k    kind
	size int // bytes per element in BINARY and BINARY2; bits are packed
}{
	"boolean": {kBool, 1}, "bit": {kBit, 1}, "unsignedByte": {kUByte, 1},
	"short": {kShort, 2}, "int": {kInt, 4}, "long": {kLong, 8},
	"char": {kChar, 1}, "unicodeChar": {kUChar, 2},
	"float": {kFloat, 4}, "double": {kDouble, 8},
	"floatComplex": {kFComplex, 8}, "doubleComplex": {kDComplex, 16},
}

// field is one FIELD of the selected TABLE.
type field struct {
	name, id, ref      string
	datatype, arraysz  string
	unit, ucd          string
	k                  kind
	size               int  // bytes per element
	count              int  // elements of a fixed array (1 for a scalar)
	variable           bool // arraysize ends in '*': a 4-byte count leads each value
	null               string
	hasNull            bool
	nullInt            int64 // VALUES null of an integer column, parsed
	integer, floating  bool
	textual, isComplex bool
}

func newField(attrs map[string]string) (*field, error) {
	f := &field{name: attrs["name"], id: attrs["ID"], ref: attrs["ref"], datatype: attrs["datatype"],
		arraysz: strings.TrimSpace(attrs["arraysize"]), unit: attrs["unit"], ucd: attrs["ucd"]}
	if f.name == "" {
		f.name = f.id
	}
	kd, ok := kinds[f.datatype]
	if !ok {
		return f, fmt.Errorf("FIELD %q: datatype %q is not a VOTable primitive", f.name, f.datatype)
	}
	f.k, f.size = kd.k, kd.size
	f.integer = f.k == kUByte || f.k == kShort || f.k == kInt || f.k == kLong
	f.floating = f.k == kFloat || f.k == kDouble
	f.textual = f.k == kChar || f.k == kUChar
	f.isComplex = f.k == kFComplex || f.k == kDComplex
	f.count = 1
	if f.arraysz != "" {
		// "n", "n*", "*", or dimensions "axbx..." whose last may end in '*'
		// (section 2.2): the stream holds the product of the dimensions.
		f.count = 1
		dims := strings.Split(f.arraysz, "x")
		for i, d := range dims {
			if strings.HasSuffix(d, "*") {
				if i != len(dims)-1 {
					return f, fmt.Errorf("FIELD %q: arraysize %q: only the last dimension may be variable", f.name, f.arraysz)
				}
				f.variable = true
				continue
			}
			n, err := strconv.Atoi(d)
			if err != nil || n < 0 {
				return f, fmt.Errorf("FIELD %q: arraysize %q is not a size", f.name, f.arraysz)
			}
			f.count *= n
			if f.bytesFor(f.count) > maxValueBytes {
				return f, fmt.Errorf("FIELD %q: arraysize %q is larger than starvet reads", f.name, f.arraysz)
			}
		}
	}
	return f, nil
}

// scalar says the field holds one value per row.
func (f *field) scalar() bool { return !f.variable && f.count == 1 }

// setNull records VALUES null (section 4.2 / 4.6: only meaningful for
// integers; for text it is the string that means null).
func (f *field) setNull(s string) error {
	f.null, f.hasNull = s, true
	if f.integer {
		v, err := parseInt(strings.TrimSpace(s))
		if err != nil {
			return fmt.Errorf("FIELD %q: VALUES null %q is not an integer", f.name, s)
		}
		f.nullInt = v
	}
	return nil
}

// parseInt reads a TABLEDATA integer: decimal, or hexadecimal with 0x
// (VOTable 1.3, section 6: "0x" prefix allowed for integers).
func parseInt(s string) (int64, error) {
	if len(s) > 2 && s[0] == '0' && (s[1] == 'x' || s[1] == 'X') {
		u, err := strconv.ParseUint(s[2:], 16, 64)
		return int64(u), err
	}
	return strconv.ParseInt(s, 10, 64)
}

// bytesFor is the stream size of n elements.
func (f *field) bytesFor(n int) int {
	if f.k == kBit {
		return (n + 7) / 8
	}
	return n * f.size
}

// number decodes one binary scalar of a numeric field: NaN when null by
// VALUES null or by its own encoding (NaN floats, '?' booleans).
func (f *field) number(p []byte) float64 {
	var i int64
	switch f.k {
	case kDouble:
		return math.Float64frombits(binary.BigEndian.Uint64(p))
	case kFloat:
		return float64(math.Float32frombits(binary.BigEndian.Uint32(p)))
	case kInt:
		i = int64(int32(binary.BigEndian.Uint32(p)))
	case kLong:
		i = int64(binary.BigEndian.Uint64(p))
	case kShort:
		i = int64(int16(binary.BigEndian.Uint16(p)))
	case kUByte:
		i = int64(p[0])
	case kBool:
		return boolValue(p[0])
	case kBit:
		return float64(p[0] >> 7)
	default:
		return math.NaN()
	}
	if f.hasNull && i == f.nullInt {
		return math.NaN()
	}
	return float64(i)
}

// boolValue reads a boolean byte (section 2.1: T/t/1 true, F/f/0 false,
// anything else, such as '?', space or NUL, null).
func boolValue(b byte) float64 {
	switch b {
	case 'T', 't', '1':
		return 1
	case 'F', 'f', '0':
		return 0
	}
	return math.NaN()
}

// numberText reads a TABLEDATA cell of a numeric field; ok is false when
// the text is not a value of the datatype. Empty text is null (section 6).
func (f *field) numberText(s string) (v float64, ok bool) {
	s = strings.TrimSpace(s)
	if s == "" {
		return math.NaN(), true
	}
	switch {
	case f.floating:
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			return 0, false
		}
		if f.k == kFloat {
			v = float64(float32(v))
		}
		return v, true
	case f.integer:
		i, err := parseInt(s)
		if err != nil {
			return 0, false
		}
		if f.hasNull && i == f.nullInt {
			return math.NaN(), true
		}
		return float64(i), true
	case f.k == kBool:
		switch strings.ToLower(s) {
		case "true":
			return 1, true
		case "false":
			return 0, true
		case "?":
			return math.NaN(), true
		}
		if len(s) == 1 {
			if v := boolValue(s[0]); !math.IsNaN(v) {
				return v, true
			}
		}
		return 0, false
	case f.k == kBit:
		switch s {
		case "0":
			return 0, true
		case "1":
			return 1, true
		}
	}
	return 0, false
}

// text renders n elements of a binary value (p holds exactly them) as the
// text of a rejected row: strings as themselves, numbers space-separated.
func (f *field) text(p []byte, n int) string {
	switch f.k {
	case kChar:
		return cString(p)
	case kUChar:
		return ucs2(p)
	}
	var b strings.Builder
	for e := 0; e < n; e++ {
		if e > 0 {
			b.WriteByte(' ')
		}
		if f.k == kBit {
			b.WriteByte('0' + p[e/8]>>(7-uint(e%8))&1)
			continue
		}
		q := p[e*f.size : (e+1)*f.size]
		switch f.k {
		case kFComplex:
			b.WriteString(fmtFloat(float64(math.Float32frombits(binary.BigEndian.Uint32(q))), 32) + " " +
				fmtFloat(float64(math.Float32frombits(binary.BigEndian.Uint32(q[4:]))), 32))
		case kDComplex:
			b.WriteString(fmtFloat(math.Float64frombits(binary.BigEndian.Uint64(q)), 64) + " " +
				fmtFloat(math.Float64frombits(binary.BigEndian.Uint64(q[8:])), 64))
		case kFloat:
			b.WriteString(fmtFloat(f.number(q), 32))
		case kDouble:
			b.WriteString(fmtFloat(f.number(q), 64))
		case kBool:
			switch v := boolValue(q[0]); v {
			case 1:
				b.WriteByte('T')
			case 0:
				b.WriteByte('F')
			default:
				b.WriteByte('?')
			}
		default:
			i := f.number(q)
			if math.IsNaN(i) {
				b.WriteString(f.null)
			} else {
				b.WriteString(strconv.FormatInt(int64(i), 10))
			}
		}
	}
	return b.String()
}

func fmtFloat(v float64, bits int) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', -1, bits)
}

// cString is a char value: up to the first NUL, which pads fixed-length
// strings in binary streams (section 5.3).
func cString(p []byte) string {
	for i, c := range p {
		if c == 0 {
			return string(p[:i])
		}
	}
	return string(p)
}

// ucs2 is a unicodeChar value: big-endian UCS-2 (section 2.1), up to the
// first NUL.
func ucs2(p []byte) string {
	u := make([]uint16, 0, len(p)/2)
	for i := 0; i+1 < len(p); i += 2 {
		c := binary.BigEndian.Uint16(p[i:])
		if c == 0 {
			break
		}
		u = append(u, c)
	}
	return string(utf16.Decode(u))
}
