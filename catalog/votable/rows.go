package votable

import (
	"context"
	"encoding/binary"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"starvet/catalog"
	"starvet/internal/position"
)

// Column roles, besides an index into Layout.Columns.
const (
	roleSkip = -1
	roleID   = -2
)

// maxValueBytes bounds one variable-length value, so a corrupt length
// prefix is an error rather than an attempt to buffer gigabytes.
const maxValueBytes = 1 << 24

// batchRows is how many rows the decoding goroutine hands over at a time;
// the context is checked between batches.
const batchRows = 4096

// rowDecoder turns the selected table's rows into batches of canonical
// numbers.
type rowDecoder struct {
	sc    *scanner
	l     *catalog.Layout
	file  string
	ser   data
	roles []int
	vals  []float64 // in Layout.Columns order
	rs    *rowStream
	mask  []byte
	id    []byte
	rows  int   // rows decoded so far
	size  int64 // bytes in the file; 0 when unknown or compressed
}

func newRowDecoder(sc *scanner, l *catalog.Layout, file string, ser data) (*rowDecoder, error) {
	d := &rowDecoder{sc: sc, l: l, file: file, ser: ser, roles: make([]int, len(sc.fields)), vals: make([]float64, len(l.Columns))}
	for i := range d.roles {
		d.roles[i] = roleSkip
	}
	d.roles[l.IDIndex] = roleID
	if f := sc.fields[l.IDIndex]; !(f.textual || f.integer && f.scalar()) {
		return nil, d.badColumn(f, "the id must be a string (char or unicodeChar) or a scalar integer")
	}
	for k, c := range l.Columns {
		d.roles[c.Index] = k
		f := sc.fields[c.Index]
		if f.textual || f.isComplex || !f.scalar() {
			return nil, d.badColumn(f, fmt.Sprintf("%s needs one real number per row", catalog.Fields[c.Field].Name))
		}
	}
	if ser == binary1 || ser == binary2 {
		d.rs = newRowStream(newChunkSource(&b64Stream{br: sc.br}))
		d.mask = make([]byte, (len(sc.fields)+7)/8)
	}
	return d, nil
}

func (d *rowDecoder) badColumn(f *field, why string) error {
	shape := f.datatype
	if f.arraysz != "" {
		shape += "[" + f.arraysz + "]"
	}
	return &position.Error{File: d.file, Name: f.name, What: fmt.Sprintf("table %q column %q", d.sc.label, f.name),
		Msg: fmt.Sprintf("%v: datatype %s: %s", ErrDatatype, shape, why), Err: fmt.Errorf("%w: %w", catalog.ErrBadHeader, ErrDatatype)}
}

// rowError is a problem that stops the file at a row.
func (d *rowDecoder) rowError(row int, f *field, msg string, sentinel error) error {
	e := &position.Error{File: d.file, Row: int64(row), What: fmt.Sprintf("table %q", d.sc.label), Msg: msg,
		Err: fmt.Errorf("%w: %w", catalog.ErrUnreadable, sentinel)}
	if f != nil {
		e.Name = f.name
		e.What += fmt.Sprintf(" column %q", f.name)
	}
	return e
}

// batch is up to batchRows rows, converted, with their raw form for the
// rows the Builder sets aside.
type batch struct {
	out   catalog.Batch
	first int // row number of the first row
	// Binary: row r's bytes are raw[off[r]:off[r+1]]. TABLEDATA: its cells
	// are cells[off[r]:off[r+1]].
	raw    []byte
	cells  []string
	off    []int
	fields []*field
	ser    data
	fatal  error
	// streamEnd is how many decoded bytes of the stream lie before the
	// batch's end, for the row-count estimate.
	streamEnd int64
}

// Record is catalog.RawRows.Record: the row's values as text.
func (b *batch) Record(r int) []string {
	if b.ser == tableData {
		return b.cells[b.off[r]:b.off[r+1]]
	}
	rec := make([]string, len(b.fields))
	src := &sliceSource{b: b.raw[b.off[r]:b.off[r+1]]}
	var mask []byte
	if b.ser == binary2 {
		mask, _ = src.next((len(b.fields) + 7) / 8)
	}
	for i, f := range b.fields {
		p, n, err := value(src, f)
		if err != nil {
			break
		}
		if mask != nil && mask[i>>3]&(0x80>>(i&7)) != 0 {
			continue
		}
		rec[i] = f.text(p, n)
	}
	return rec
}

// FieldLine is catalog.RawRows.FieldLine: the 1-based row.
func (b *batch) FieldLine(r, _ int) int { return b.first + r }

// source is a rowStream or a kept row's bytes.
type source interface {
	next(n int) ([]byte, error)
}

// value reads one field's value: its bytes and element count (VOTable
// 1.3, section 5.1: a variable-length array is led by its element count
// as a 4-byte big-endian integer).
func value(s source, f *field) ([]byte, int, error) {
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

// run decodes the rows on a goroutine of its own and hands the batches to
// bld in file order on the caller's.
func (d *rowDecoder) run(ctx context.Context, bld *catalog.Builder) error {
	out := make(chan *batch, 2)
	free := make(chan *batch, 4)
	for range cap(free) {
		free <- &batch{fields: d.sc.fields, ser: d.ser}
	}
	done := make(chan struct{})
	go func() {
		defer close(out)
		for {
			var b *batch
			select {
			case b = <-free:
			case <-done:
				return
			}
			more := d.fill(b)
			select {
			case out <- b:
			case <-done:
				return
			}
			if !more {
				return
			}
		}
	}()
	defer func() {
		close(done)
		for range out {
		}
		if d.rs != nil {
			d.rs.src.stop()
		}
	}()
	presized := d.size <= 0 || d.rs == nil
	for b := range out {
		if b.fatal != nil {
			return b.fatal
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		if !presized && b.out.Len() > 0 && b.streamEnd > 0 {
			// Grow every column once, from the file's size and the first
			// batch's bytes per row (base64 holds 3 bytes in 4 characters).
			rows := b.first - 1 + b.out.Len()
			perRow := float64(b.streamEnd) / float64(rows)
			bld.Reserve(int(float64(d.size)*0.75/perRow*1.02) + 16)
			presized = true
		}
		if err := bld.Add(&b.out, b); err != nil {
			return err
		}
		free <- b
	}
	if d.sc.nrows >= 0 && d.rows != d.sc.nrows {
		return d.rowError(0, nil, fmt.Sprintf("%v: the TABLE declares nrows=%d but its data holds %d rows", ErrTruncated, d.sc.nrows, d.rows), ErrTruncated)
	}
	return nil
}

// fill decodes up to batchRows rows into b and reports whether more may
// follow.
func (d *rowDecoder) fill(b *batch) bool {
	b.out.Begin(d.l, batchRows)
	b.first = d.rows + 1
	b.raw, b.cells, b.off = b.raw[:0], b.cells[:0], append(b.off[:0], 0)
	more := true
	for b.out.Len() < batchRows && more {
		var err error
		switch d.ser {
		case tableData:
			more, err = d.textRow(b)
		case binary1, binary2:
			more, err = d.binaryRow(b)
		default:
			more = false
		}
		if err != nil {
			b.fatal = err
			more = false
		}
	}
	b.out.End()
	if d.rs != nil {
		b.streamEnd = d.rs.consumed + int64(d.rs.r)
	}
	return more
}

// binaryRow decodes one row of a BINARY or BINARY2 stream (VOTable 1.3,
// sections 5.4-5.5: BINARY2 leads each row with a null bitmask, one bit
// per field, most significant bit first).
func (d *rowDecoder) binaryRow(b *batch) (bool, error) {
	s := d.rs
	end, err := s.atEnd()
	if err != nil {
		return false, d.streamError(d.rows+1, nil, err)
	}
	if end {
		return false, nil
	}
	at := d.rows + 1
	s.mark = s.r
	if d.ser == binary2 {
		p, err := s.next(len(d.mask))
		if err != nil {
			return false, d.streamError(at, d.sc.fields[0], err)
		}
		copy(d.mask, p)
	}
	id, idNull := d.id[:0], false
	for i, f := range d.sc.fields {
		p, _, err := s.value(f)
		if err != nil {
			return false, d.streamError(at, f, err)
		}
		role := d.roles[i]
		if role == roleSkip {
			continue
		}
		null := d.ser == binary2 && d.mask[i>>3]&(0x80>>(i&7)) != 0
		if role >= 0 {
			if null {
				d.vals[role] = math.NaN()
			} else {
				d.vals[role] = f.number(p)
			}
			continue
		}
		if null {
			idNull = true
			continue
		}
		id, idNull = appendID(id, f, p)
	}
	d.id = id
	b.raw = append(b.raw, s.buf[s.mark:s.r]...)
	b.off = append(b.off, len(b.raw))
	d.rows++
	d.add(b, at, id, idNull)
	return true, nil
}

func (d *rowDecoder) add(b *batch, at int, id []byte, idNull bool) {
	if idNull || len(id) == 0 {
		b.out.Reject(at, d.l.MissingID(at))
		return
	}
	if q := d.l.ConvertValues(d.vals, b.out.Row(), at); q != nil {
		b.out.Reject(at, q)
		return
	}
	b.out.Add(at, id)
}

// appendID appends a binary id value as text; null says the value is
// its column's VALUES null.
func appendID(dst []byte, f *field, p []byte) ([]byte, bool) {
	switch {
	case f.k == kChar:
		s := cString(p)
		return append(dst, s...), f.hasNull && s == f.null
	case f.k == kUChar:
		s := ucs2(p)
		return append(dst, s...), f.hasNull && s == f.null
	}
	v := f.number(p)
	if math.IsNaN(v) {
		return dst, true
	}
	var i int64
	switch f.k {
	case kLong:
		i = int64(binary.BigEndian.Uint64(p)) // exact beyond 2^53
	default:
		i = int64(v)
	}
	return strconv.AppendInt(dst, i, 10), false
}

func (d *rowDecoder) streamError(row int, f *field, err error) error {
	kind := "BINARY"
	if d.ser == binary2 {
		kind = "BINARY2"
	}
	switch {
	case errors.Is(err, io.ErrUnexpectedEOF):
		return d.rowError(row, f, fmt.Sprintf("%v: the %s stream ends inside row %d; the file is cut short or was written wrong", ErrTruncated, kind, row), ErrTruncated)
	case errors.Is(err, io.EOF):
		return d.rowError(row, f, fmt.Sprintf("%v: the %s stream ends inside row %d; the file is cut short or was written wrong", ErrTruncated, kind, row), ErrTruncated)
	case errors.Is(err, errStreamEOF):
		return d.rowError(row, f, fmt.Sprintf("%v: %v (in row %d)", ErrMalformed, err, row), ErrMalformed)
	}
	return d.rowError(row, f, fmt.Sprintf("%v: %s stream: %v", ErrMalformed, kind, err), ErrMalformed)
}

// textRow reads one TR of TABLEDATA (section 6: one TD per FIELD; an
// empty TD is null).
func (d *rowDecoder) textRow(b *batch) (bool, error) {
	at := d.rows + 1
	for {
		t, err := d.sc.token()
		if err == io.EOF {
			err = fmt.Errorf("%w: the document ends inside TABLEDATA", errSyntax)
		}
		if err != nil {
			return false, d.rowError(at, nil, fmt.Sprintf("%v: %v", ErrMalformed, err), ErrMalformed)
		}
		switch t := t.(type) {
		case xml.StartElement:
			if t.Name.Local != "TR" {
				return false, d.rowError(at, nil, fmt.Sprintf("%v: <%s> inside TABLEDATA, where only TR belongs", ErrMalformed, t.Name.Local), ErrMalformed)
			}
			return true, d.readTR(b, at)
		case xml.EndElement:
			return false, nil // </TABLEDATA>; encoding/xml has checked the nesting
		}
	}
}

func (d *rowDecoder) readTR(b *batch, at int) error {
	start := len(b.cells)
	var text []byte
	inTD := false
	for {
		t, err := d.sc.token()
		if err == io.EOF {
			err = fmt.Errorf("%w: the document ends inside a TR", errSyntax)
		}
		if err != nil {
			return d.rowError(at, nil, fmt.Sprintf("%v: %v", ErrMalformed, err), ErrMalformed)
		}
		switch t := t.(type) {
		case xml.StartElement:
			if t.Name.Local != "TD" || inTD {
				return d.rowError(at, nil, fmt.Sprintf("%v: <%s> inside a TR, where only TD belongs", ErrMalformed, t.Name.Local), ErrMalformed)
			}
			for _, a := range t.Attr {
				if a.Name.Local == "encoding" && a.Value != "" {
					return d.rowError(at, nil, fmt.Sprintf("TD encoding %q is not read", a.Value), ErrMalformed)
				}
			}
			inTD, text = true, text[:0]
		case xml.CharData:
			if inTD {
				text = append(text, t...)
			}
		case xml.EndElement:
			if t.Name.Local == "TD" {
				b.cells = append(b.cells, string(text))
				inTD = false
				continue
			}
			d.rows++
			b.off = append(b.off, len(b.cells))
			d.convertText(b, at, b.cells[start:])
			return nil
		}
	}
}

func (d *rowDecoder) convertText(b *batch, at int, cells []string) {
	fields := d.sc.fields
	if len(cells) != len(fields) {
		b.out.Reject(at, &catalog.Quarantine{Row: at, Column: min(len(cells), len(fields)) + 1, Err: catalog.ErrFieldCount,
			Reason: fmt.Sprintf("%s: row has %d TD, the table %d FIELD", catalog.ErrFieldCount, len(cells), len(fields))})
		return
	}
	var id []byte
	idNull := false
	for i, f := range fields {
		switch role := d.roles[i]; {
		case role >= 0:
			v, ok := f.numberText(cells[i])
			if !ok {
				b.out.Reject(at, &catalog.Quarantine{Row: at, Column: i + 1, ColumnName: f.name, Value: cells[i], Err: catalog.ErrNotNumber,
					Reason: fmt.Sprintf("%s: not a VOTable %s", catalog.ErrNotNumber, f.datatype)})
				return
			}
			d.vals[role] = v
		case role == roleID:
			if f.textual {
				id, idNull = append(d.id[:0], cells[i]...), f.hasNull && cells[i] == f.null
				break
			}
			v, ok := f.numberText(cells[i])
			if !ok {
				b.out.Reject(at, &catalog.Quarantine{Row: at, Column: i + 1, ColumnName: f.name, Value: cells[i], Err: catalog.ErrNotNumber,
					Reason: fmt.Sprintf("%s: the id is not a VOTable %s", catalog.ErrNotNumber, f.datatype)})
				return
			}
			if math.IsNaN(v) {
				idNull = true
				break
			}
			i64, _ := parseInt(strings.TrimSpace(cells[i]))
			id = strconv.AppendInt(d.id[:0], i64, 10)
		}
	}
	d.add(b, at, id, idNull)
}
