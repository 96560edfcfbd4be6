package fitscat

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"sync"

	"starvet/catalog"
	"starvet/internal/parallel"
	"starvet/internal/position"
)

// Reader is the FITS reader as package ingest calls it.
type Reader struct{}

// Columns is the package function Columns.
func (Reader) Columns(_ context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	return Columns(spec)
}

// Read is the package function Read.
func (Reader) Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	return Read(ctx, spec, opt)
}

// hdu is the selected extension.
type hdu struct {
	num     int // 0 = primary, 1 = first extension
	extname string
	hdr     *header
	t       *table
}

func (h *hdu) label() string { return hduLabel(h.num, h.extname) }

func hduLabel(num int, extname string) string {
	s := "HDU " + strconv.Itoa(num)
	if num == 0 {
		s += " (primary)"
	}
	if extname != "" {
		s += fmt.Sprintf(" (EXTNAME %q)", extname)
	}
	return s
}

// Columns describes the selected table's columns: TTYPEn as the name,
// TFORMn as the datatype, TUNITn and TUCDn.
func Columns(spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	in, err := open(spec.File)
	if err != nil {
		return nil, err
	}
	defer in.Close()
	h, err := in.find(spec.HDU)
	if err != nil {
		return nil, err
	}
	return metas(h.t), nil
}

func metas(t *table) []catalog.ColumnMeta {
	cols := make([]catalog.ColumnMeta, len(t.cols))
	for i := range t.cols {
		c := &t.cols[i]
		cols[i] = catalog.ColumnMeta{Name: c.name, Datatype: c.datatype(), Unit: c.unit, UCD: c.ucd}
	}
	return cols
}

// fileErr is a problem with the whole file, or one HDU of it.
func (in *input) fileErr(sentinel error, where, format string, args ...any) *position.Error {
	msg := fmt.Sprintf(format, args...)
	if where != "" {
		msg = where + ": " + msg
	}
	return &position.Error{File: in.Name, Msg: msg, Err: sentinel}
}

// colErr is a problem with one column of the selected table.
func colErr(name string, h *hdu, c *column, sentinel error, format string, args ...any) *position.Error {
	return &position.Error{File: name, Name: c.name, What: fmt.Sprintf("%s, column %q (TFORM %q)", h.label(), c.name, c.form),
		Msg: fmt.Sprintf(format, args...), Err: sentinel}
}

// find reads HDUs until the one sel names (Spec.HDU): "" the first
// BINTABLE, a number the extension with that number, else the extension
// whose EXTNAME is sel (compared without regard to case, common practice).
// It leaves the input at the selected table's first row.
func (in *input) find(sel string) (*hdu, error) {
	want := -1
	if sel != "" {
		if n, err := strconv.Atoi(sel); err == nil {
			if n < 1 {
				return nil, in.fileErr(catalog.ErrBadSpec, "", "hdu = %q: extensions are numbered from 1; HDU 0 is the primary array, which holds no table", sel)
			}
			want = n
		}
	}
	var seen []string
	for num := 0; ; num++ {
		h, err := readHeader(in.r)
		if err == io.EOF {
			if num == 0 {
				return nil, in.fileErr(catalog.ErrUnreadable, "", "file is empty")
			}
			break
		}
		label := hduLabel(num, "")
		if err != nil {
			sentinel := catalog.ErrUnreadable
			if !errors.Is(err, errNoEND) {
				sentinel = catalog.ErrBadHeader
			}
			return nil, in.fileErr(sentinel, label, "header: %v", err)
		}
		in.pos += h.bytes
		first := ""
		if len(h.cards) > 0 {
			first = h.cards[0].key
		}
		if num == 0 && first != "SIMPLE" {
			return nil, in.fileErr(catalog.ErrUnreadable, "", "not a FITS file: the first card is not SIMPLE (FITS Standard 4.0, section 4.4.1.1)")
		}
		if num > 0 && first != "XTENSION" {
			return nil, in.fileErr(catalog.ErrUnreadable, label, "header does not start with XTENSION (section 7); garbage after the last HDU?")
		}
		xt, extname := strings.TrimSpace(h.str("XTENSION")), h.str("EXTNAME")
		label = hduLabel(num, extname)
		seen = append(seen, fmt.Sprintf("%s: %s", label, map[bool]string{true: "primary array", false: "XTENSION " + xt}[num == 0]))
		size, err := h.dataBytes(num == 0)
		if err != nil {
			return nil, in.fileErr(catalog.ErrBadHeader, label, "header: %v", err)
		}
		picked := num > 0 && (want == num || want < 0 && sel != "" && strings.EqualFold(extname, sel) || sel == "" && xt == "BINTABLE")
		if picked {
			switch xt {
			case "BINTABLE":
				t, err := parseTable(h)
				if err != nil {
					return nil, in.fileErr(catalog.ErrBadHeader, label, "%v", err)
				}
				return &hdu{num: num, extname: extname, hdr: h, t: t}, nil
			case "TABLE":
				return nil, in.fileErr(catalog.ErrFormat, label, "an ASCII TABLE extension is not supported; starvet reads binary tables (XTENSION = 'BINTABLE')")
			default:
				return nil, in.fileErr(catalog.ErrFormat, label, "XTENSION = %q is not a binary table", xt)
			}
		}
		skip := padded(size)
		n, err := io.CopyN(io.Discard, in.r, skip)
		in.pos += n
		if err != nil && n < size {
			return nil, in.fileErr(catalog.ErrUnreadable, label, "data truncated: %d of %d bytes present", n, size)
		}
		if err != nil {
			break // only the last block's padding is missing
		}
	}
	what := "no binary table (BINTABLE) extension"
	if sel != "" {
		what = fmt.Sprintf("no extension %q", sel)
	}
	return nil, in.fileErr(catalog.ErrBadSpec, "", "%s; the file holds %s", what, strings.Join(seen, "; "))
}

// Read ingests the selected binary table of one FITS file (.fits, .fit,
// optionally gzipped) into canonical units. File-level problems are
// returned as *position.Error naming the file and HDU (and the column when
// one is to blame); row problems quarantine the row at its 1-based row
// number (or, with opt.Strict, the first is returned as a
// *position.Error). The Report is returned, possibly partial, with every
// error except an unopenable file.
func Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	rep := &catalog.Report{File: spec.File}
	if err := spec.Check(); err != nil {
		return nil, rep, err
	}
	in, err := open(spec.File)
	if errors.Is(err, catalog.ErrNoFile) {
		return nil, nil, err
	}
	if err != nil {
		return nil, rep, err
	}
	defer in.Close()
	h, err := in.find(spec.HDU)
	if err != nil {
		return nil, rep, err
	}
	bld, _, err := catalog.NewBuilderFromMeta(spec, metas(h.t), true, opt)
	if err != nil {
		return nil, rep, err
	}
	p, err := newPlan(spec.File, h, bld.Layout())
	if err != nil {
		return nil, bld.Report(), err
	}
	t := h.t
	dataBytes := t.rowBytes * t.rows
	if t.rows > 0 && t.rowBytes == 0 {
		return nil, bld.Report(), in.fileErr(catalog.ErrBadHeader, h.label(), "NAXIS2 = %d rows of NAXIS1 = 0 bytes", t.rows)
	}
	reserve := t.rows
	if !in.Gzipped() {
		if left := in.Size - in.pos; dataBytes > left {
			return nil, bld.Report(), in.fileErr(catalog.ErrUnreadable, h.label(),
				"data truncated: NAXIS1 x NAXIS2 = %d x %d = %d bytes, the file has %d after the header", t.rowBytes, t.rows, dataBytes, left)
		}
	} else if t.rowBytes > 0 {
		// deflate expands at most about 1032 to 1 (RFC 1951), which bounds
		// the rows a hostile NAXIS2 can make us reserve room for.
		reserve = min(reserve, in.Size*1100/t.rowBytes+1)
	}
	bld.Reserve(int(reserve))
	if err := p.stream(ctx, in, bld, parallel.Workers(opt.Workers)); err != nil {
		var pe *position.Error
		if errors.As(err, &pe) && pe.Row > 0 && !strings.HasPrefix(pe.What, "HDU") {
			pe.What = strings.TrimSuffix(h.label()+", "+pe.What, ", ")
		}
		return nil, bld.Report(), err
	}
	sum, err := in.Finish()
	if err != nil {
		return nil, bld.Report(), err
	}
	tab, rep := bld.Finish()
	rep.SHA256 = sum
	return tab, rep, nil
}

// plan is how the rows of one table are decoded: the cells of the mapped
// numeric columns in Layout.Columns order, and the id cell.
type plan struct {
	file   string
	h      *hdu
	layout *catalog.Layout
	num    []*column
	id     *column
}

// newPlan checks that every mapped column can be read: a numeric field
// takes one B, I, J, K, E or D value a row; the id is text (A) or an
// integer (B, I, J, K, written in decimal).
func newPlan(file string, h *hdu, l *catalog.Layout) (*plan, error) {
	p := &plan{file: file, h: h, layout: l, id: &h.t.cols[l.IDIndex]}
	for _, lc := range l.Columns {
		c := &h.t.cols[lc.Index]
		field := catalog.Fields[lc.Field].Name
		switch {
		case !strings.ContainsRune("BIJKED", rune(c.code)):
			return nil, colErr(file, h, c, catalog.ErrBadHeader, "mapped to %s, which needs numbers, but it holds %s", field, kind(c.code))
		case c.repeat != 1:
			return nil, colErr(file, h, c, catalog.ErrBadHeader, "mapped to %s, which needs one number a row, but it holds %d", field, c.repeat)
		}
		p.num = append(p.num, c)
	}
	c := p.id
	switch {
	case c.code == 'A':
	case strings.ContainsRune("BIJK", rune(c.code)) && c.repeat == 1:
		if !c.exactInt() {
			return nil, colErr(file, h, c, catalog.ErrBadHeader, "mapped to id: TSCAL/TZERO make its values non-integers")
		}
	default:
		return nil, colErr(file, h, c, catalog.ErrBadHeader, "mapped to id, which must be text (A) or one integer a row (B, I, J, K); it holds %s", kind(c.code))
	}
	return p, nil
}

func kind(code byte) string {
	switch code {
	case 'L':
		return "logical values (L)"
	case 'X':
		return "bits (X)"
	case 'A':
		return "characters (A)"
	case 'C', 'M':
		return fmt.Sprintf("complex numbers (%c)", code)
	case 'P', 'Q':
		return fmt.Sprintf("variable-length arrays in the heap (%c), which starvet does not read", code)
	}
	return fmt.Sprintf("numbers (%c)", code)
}

// chunkBytes is about how much of the table one chunk holds: large enough
// that a chunk's overhead vanishes, small enough that a few in flight stay
// in cache.
const chunkBytes = 1 << 19

// chunk is consecutive rows of the table, decoded into out by a worker.
type chunk struct {
	buf     []byte
	n       int   // rows
	first   int64 // 1-based row of buf's first row
	out     catalog.Batch
	bad     []*catalog.Quarantine
	idBuf   []byte
	idOff   []int
	tile    [][]float64
	err     error
	decoded chan struct{}
	p       *plan
}

// Record is catalog.RawRows.Record: every cell of row r as text.
func (ch *chunk) Record(r int) []string {
	rb := int(ch.p.h.t.rowBytes)
	row := ch.buf[r*rb : (r+1)*rb]
	cols := ch.p.h.t.cols
	rec := make([]string, len(cols))
	for i := range cols {
		c := &cols[i]
		rec[i] = c.text(row[c.offset : c.offset+c.width])
	}
	return rec
}

// FieldLine is catalog.RawRows.FieldLine: the row's 1-based number.
func (ch *chunk) FieldLine(r, _ int) int { return int(ch.first) + r }

// stream reads the rows chunk by chunk on one goroutine, decodes chunks on
// workers, and hands them to the builder in file order. The context is
// checked between chunks.
func (p *plan) stream(ctx context.Context, in *input, bld *catalog.Builder, workers int) error {
	t := p.h.t
	if t.rows == 0 {
		return nil
	}
	perChunk := max(1, chunkBytes/t.rowBytes)
	work := make(chan *chunk, workers)
	ordered := make(chan *chunk, workers+2)
	free := make(chan *chunk, workers+3)
	quit := make(chan struct{})
	for range cap(free) {
		free <- &chunk{p: p}
	}
	var wg sync.WaitGroup
	wg.Add(1 + workers)
	go func() {
		defer wg.Done()
		defer close(ordered)
		defer close(work)
		for next := int64(0); next < t.rows; {
			var ch *chunk
			select {
			case ch = <-free:
			case <-quit:
				return
			}
			n := min(perChunk, t.rows-next)
			want := int(n * t.rowBytes)
			if cap(ch.buf) < want {
				ch.buf = make([]byte, want)
			}
			ch.buf = ch.buf[:want]
			got, err := io.ReadFull(in.r, ch.buf)
			ch.first, ch.n, ch.err = next+1, int(n), nil
			if err != nil {
				ch.n = 0
				ch.err = in.fileErr(catalog.ErrUnreadable, p.h.label(), "data truncated in row %d: NAXIS2 = %d rows of %d bytes expected, the data end after %d rows (%v)",
					next+int64(got)/t.rowBytes+1, t.rows, t.rowBytes, next+int64(got)/t.rowBytes, err)
			}
			next += n
			ch.decoded = make(chan struct{})
			select {
			case ordered <- ch:
			case <-quit:
				return
			}
			select {
			case work <- ch:
			case <-quit:
				return
			}
			if err != nil {
				return
			}
		}
	}()
	for range workers {
		go func() {
			defer wg.Done()
			for ch := range work {
				p.decode(ch)
				close(ch.decoded)
			}
		}()
	}
	defer func() {
		close(quit)
		for range ordered {
		}
		wg.Wait()
	}()
	for ch := range ordered {
		<-ch.decoded
		if err := ctx.Err(); err != nil {
			return err
		}
		if ch.err != nil {
			return ch.err
		}
		if err := bld.Add(&ch.out, ch); err != nil {
			return err
		}
		select {
		case free <- ch:
		default:
		}
	}
	return nil
}

// tileRows is how many rows decode converts at a time: their bytes and
// their values stay in cache between decoding and converting.
const tileRows = 256

// decode converts the chunk's rows into ch.out: a tile of rows at a time,
// each mapped cell straight into the batch's column as a number in the
// file's unit (NaN for null), then Layout.ConvertColumns on the tile.
func (p *plan) decode(ch *chunk) {
	l := p.layout
	out := &ch.out
	out.Begin(l, ch.n)
	rb := int(p.h.t.rowBytes)
	buf := ch.buf[:ch.n*rb]
	bad := ch.bad[:0]
	id := p.id
	idText := id.code == 'A'
	ch.idBuf, ch.idOff = ch.idBuf[:0], append(ch.idOff[:0], 0)
	for r := range ch.n {
		rec := buf[r*rb : (r+1)*rb : (r+1)*rb]
		at := int(ch.first) + r
		start := len(ch.idBuf)
		ok := true
		if idText {
			ch.idBuf = appendString(ch.idBuf, rec[id.offset:id.offset+id.width])
		} else {
			ch.idBuf, ok = id.appendIntText(ch.idBuf, rec[id.offset:])
		}
		var q *catalog.Quarantine
		if !ok || l.IsNullBytes(ch.idBuf[start:]) {
			ch.idBuf = ch.idBuf[:start]
			q = l.MissingID(at)
		}
		bad = append(bad, q)
		ch.idOff = append(ch.idOff, len(ch.idBuf))
	}
	ch.bad = bad
	if len(ch.tile) != len(p.num) {
		ch.tile = make([][]float64, len(p.num))
	}
	for t0 := 0; t0 < ch.n; t0 += tileRows {
		t1 := min(t0+tileRows, ch.n)
		for k := range ch.tile {
			ch.tile[k] = out.Vals[k][t0:t1]
		}
		p.decodeTile(buf[t0*rb:t1*rb], rb, ch.tile)
		l.ConvertColumns(ch.tile, t1-t0, int(ch.first)+t0, bad[t0:t1])
	}
	for r, q := range bad {
		at := int(ch.first) + r
		if q != nil {
			out.Reject(at, q)
			continue
		}
		out.AddConverted(at, ch.idBuf[ch.idOff[r]:ch.idOff[r+1]])
	}
	out.End()
}

// decodeTile decodes the mapped cells of the rows in buf into vals, a
// column at a time: the tile's bytes stay in cache.
func (p *plan) decodeTile(buf []byte, rb int, vals [][]float64) {
	rows := len(buf) / rb
	for k, c := range p.num {
		dst := vals[k][:rows]
		off := c.offset
		switch {
		case c.scaled:
			for r := range dst {
				dst[r] = c.number(buf[r*rb+off:])
			}
		case c.code == 'D':
			for r := range dst {
				dst[r] = math.Float64frombits(binary.BigEndian.Uint64(buf[r*rb+off:]))
			}
		case c.code == 'E':
			for r := range dst {
				dst[r] = float64(math.Float32frombits(binary.BigEndian.Uint32(buf[r*rb+off:])))
			}
		default:
			for r := range dst {
				dst[r] = c.number(buf[r*rb+off:])
			}
		}
	}
}
