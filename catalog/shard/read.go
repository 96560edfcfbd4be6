package shard

import (
	"bufio"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"os"
	"slices"

	"starvet/catalog"
	"starvet/internal/position"
)

// Sentinel errors; every read error also wraps catalog.ErrUnreadable,
// except a refused spec, which wraps catalog.ErrBadSpec, and a missing
// file, which wraps catalog.ErrNoFile.
var (
	ErrNotShard = errors.New("not a shard (wrong magic)")
	ErrVersion  = errors.New("unsupported shard version")
	ErrCorrupt  = errors.New("corrupt shard")
	ErrMapping  = errors.New("a shard takes no column mapping: its values are canonical already")
)

// Reader is the shard reader behind ingest.Reader.
type Reader struct{}

// Columns lists the shard's fields: id, then its numeric columns in
// canonical field order, each named by its canonical name with its
// canonical unit ("" for id and dimensionless fields).
func (Reader) Columns(_ context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	f, h, err := open(spec.File)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	d := newDecoder(spec.File, f, h)
	s, err := d.structure()
	if err != nil {
		return nil, err
	}
	cols := []catalog.ColumnMeta{{Name: catalog.Fields[catalog.ID].Name, Datatype: "utf8"}}
	for _, c := range s.fields {
		cols = append(cols, catalog.ColumnMeta{Name: catalog.Fields[c].Name, Datatype: "float64", Unit: catalog.Fields[c].Unit})
	}
	return cols, nil
}

// Read reads the shard spec.File. The table's Name, Release, Role and
// EpochJyr are the spec's where it sets them, else the stored ones; ids,
// lines and columns are exactly as written. Errors are *position.Error
// values naming the file; no table is returned with one.
func (Reader) Read(ctx context.Context, spec catalog.Spec, _ catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	rep := &catalog.Report{File: spec.File}
	if err := checkSpec(spec); err != nil {
		return nil, rep, err
	}
	f, h, err := open(spec.File)
	if errors.Is(err, catalog.ErrNoFile) {
		return nil, nil, err
	}
	if err != nil {
		return nil, rep, err
	}
	defer f.Close()
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		return nil, rep, catalog.WrapFileError(spec.File, 0, "", catalog.ErrUnreadable, err)
	}
	hr := catalog.NewHashingReader(f, 0)
	defer hr.Close()
	if _, err := io.CopyN(io.Discard, hr, int64(headerSize)); err != nil {
		return nil, rep, failAt(spec.File, 0, "", ErrCorrupt, err.Error())
	}
	d := newDecoder(spec.File, hr, h)
	t, err := d.table(ctx)
	if err != nil {
		return nil, rep, err
	}
	rep.SHA256 = hr.Sum()
	rep.Header = []string{catalog.Fields[catalog.ID].Name}
	rep.Mapped = map[string]string{catalog.Fields[catalog.ID].Name: catalog.Fields[catalog.ID].Name}
	for c := catalog.Field(1); c < catalog.NumFields; c++ {
		if t.Cols[c] != nil {
			n := catalog.Fields[c].Name
			rep.Header = append(rep.Header, n)
			rep.Mapped[n] = n
		}
	}
	rep.RowsRead, rep.RowsKept = t.Len(), t.Len()
	if spec.Name != "" {
		t.Name = spec.Name
	}
	if spec.Release != "" {
		t.Release = spec.Release
	}
	if spec.Role != "" {
		t.Role = spec.Role
	}
	if spec.EpochJyr != 0 {
		t.EpochJyr = spec.EpochJyr
	}
	return t, rep, nil
}

// checkSpec refuses a spec that maps columns or units other than onto
// themselves.
func checkSpec(spec catalog.Spec) error {
	bad := func(why string) error {
		return &position.Error{File: spec.File, Msg: fmt.Sprintf("%s: %s", ErrMapping, why), Err: fmt.Errorf("%w: %w", catalog.ErrBadSpec, ErrMapping)}
	}
	for name, h := range spec.Columns {
		if _, ok := catalog.FieldByName(name); !ok || h != name {
			return bad(fmt.Sprintf("columns maps %s to %q", name, h))
		}
	}
	for name, u := range spec.Units {
		f, ok := catalog.FieldByName(name)
		if !ok {
			return bad(fmt.Sprintf("units names unknown field %q", name))
		}
		if word, err := catalog.FileUnit(f, u); err != nil || word != "" {
			return bad(fmt.Sprintf("units gives %s in %q, not its canonical unit", name, u))
		}
	}
	return nil
}

// header is the fixed header of a shard.
type header struct {
	crc     uint32
	payload uint64
}

// open opens a shard and checks its fixed header against the file's size.
func open(name string) (*os.File, header, error) {
	var h header
	f, err := os.Open(name)
	if err != nil {
		return nil, h, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, h, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	head := make([]byte, headerSize)
	n, err := io.ReadFull(f, head)
	switch {
	case n < len(magic) || string(head[:len(magic)]) != magic:
		err = failAt(name, 0, "", ErrNotShard, fmt.Sprintf("the file does not begin with the shard magic %q", magic))
	case err != nil:
		err = failAt(name, int64(n), "", ErrCorrupt, fmt.Sprintf("the file ends inside its %d-byte header", headerSize))
	}
	if err != nil {
		f.Close()
		return nil, h, err
	}
	v := binary.LittleEndian.Uint32(head[len(magic):])
	h.crc = binary.LittleEndian.Uint32(head[len(magic)+4:])
	h.payload = binary.LittleEndian.Uint64(head[len(magic)+8:])
	switch {
	case v == 0 || v > Version:
		err = failAt(name, int64(len(magic)), "", ErrVersion, fmt.Sprintf("format version %d; this build reads versions 1 to %d", v, Version))
	case uint64(st.Size()-int64(headerSize)) != h.payload:
		err = failAt(name, st.Size(), "", ErrCorrupt,
			fmt.Sprintf("the payload is %d bytes but the header says %d (the file is truncated or has bytes appended)", st.Size()-int64(headerSize), h.payload))
	}
	if err != nil {
		f.Close()
		return nil, h, err
	}
	return f, h, nil
}

// failAt is a read error at byte offset off of the file (and, when col is
// set, in that column).
func failAt(file string, off int64, col string, sentinel error, why string) *position.Error {
	e := &position.Error{File: file, Msg: fmt.Sprintf("byte %d: %s: %s", off, sentinel, why), Err: fmt.Errorf("%w: %w", catalog.ErrUnreadable, sentinel)}
	if col != "" {
		e.Name, e.What = col, fmt.Sprintf("column %q", col)
	}
	return e
}

// counter feeds what bufio takes from the file after the header, which is
// all payload, to the checksum.
type counter struct {
	r   io.Reader
	crc uint32
	n   int64
}

func (c *counter) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.crc = crc32.Update(c.crc, castagnoli, p[:n])
	c.n += int64(n)
	return n, err
}

type decoder struct {
	name string
	h    header
	c    *counter
	br   *bufio.Reader
}

func newDecoder(name string, r io.Reader, h header) *decoder {
	c := &counter{r: r}
	return &decoder{name: name, h: h, c: c, br: bufio.NewReaderSize(c, 1<<16)}
}

// off is the byte offset in the file of the next byte to decode.
func (d *decoder) off() int64 { return int64(headerSize) + d.c.n - int64(d.br.Buffered()) }

func (d *decoder) left() uint64 { return d.h.payload - uint64(d.off()-int64(headerSize)) }

func (d *decoder) fail(row int, col, why string) error {
	e := failAt(d.name, d.off(), col, ErrCorrupt, why)
	e.Row = int64(row)
	return e
}

func (d *decoder) uvarint(row int, what string) (uint64, error) {
	x, err := binary.ReadUvarint(d.br)
	if err != nil {
		return 0, d.fail(row, "", fmt.Sprintf("%s: %v", what, eof(err)))
	}
	return x, nil
}

func (d *decoder) bytes(row int, what string, dst []byte) ([]byte, error) {
	n, err := d.uvarint(row, what+" length")
	if err != nil {
		return nil, err
	}
	if n > d.left() {
		return nil, d.fail(row, "", fmt.Sprintf("%s length %d exceeds the %d payload bytes left", what, n, d.left()))
	}
	at := len(dst)
	dst = slices.Grow(dst, int(n))[:at+int(n)]
	if _, err := io.ReadFull(d.br, dst[at:]); err != nil {
		return nil, d.fail(row, "", fmt.Sprintf("%s: %v", what, eof(err)))
	}
	return dst, nil
}

func eof(err error) error {
	if err == io.EOF {
		return io.ErrUnexpectedEOF
	}
	return err
}

// structure is the payload up to the ids.
type structure struct {
	rows                int
	name, release, role string
	epoch               float64
	fields              []catalog.Field
}

func (d *decoder) structure() (*structure, error) {
	s := &structure{}
	rows, err := d.uvarint(0, "row count")
	if err != nil {
		return nil, err
	}
	ncols, err := d.uvarint(0, "column count")
	if err != nil {
		return nil, err
	}
	if ncols >= uint64(catalog.NumFields) {
		return nil, d.fail(0, "", fmt.Sprintf("%d columns, more than there are fields", ncols))
	}
	// Every row takes at least a byte of id length, a byte of line and 8
	// bytes a column, so a corrupt count cannot make us allocate much.
	if rows > d.h.payload/(2+8*ncols) {
		return nil, d.fail(0, "", fmt.Sprintf("%d rows of %d columns do not fit %d payload bytes", rows, ncols, d.h.payload))
	}
	s.rows = int(rows)
	for _, p := range []*string{&s.name, &s.release, &s.role} {
		b, err := d.bytes(0, "table name, release or role", nil)
		if err != nil {
			return nil, err
		}
		*p = string(b)
	}
	var eb [8]byte
	if _, err := io.ReadFull(d.br, eb[:]); err != nil {
		return nil, d.fail(0, "", fmt.Sprintf("epoch: %v", eof(err)))
	}
	s.epoch = math.Float64frombits(binary.LittleEndian.Uint64(eb[:]))
	seen := map[catalog.Field]bool{}
	for range ncols {
		b, err := d.bytes(0, "column name", nil)
		if err != nil {
			return nil, err
		}
		f, ok := catalog.FieldByName(string(b))
		if !ok || f == catalog.ID || seen[f] {
			return nil, d.fail(0, string(b), "not a canonical numeric field, or repeated")
		}
		seen[f] = true
		s.fields = append(s.fields, f)
	}
	return s, nil
}

// table decodes the whole payload and checks its checksum.
func (d *decoder) table(ctx context.Context) (*catalog.Table, error) {
	s, err := d.structure()
	if err != nil {
		return nil, err
	}
	t := &catalog.Table{Name: s.name, Release: s.release, Role: catalog.Role(s.role), EpochJyr: s.epoch,
		IDs: make([]string, s.rows), Lines: make([]int, s.rows)}
	var arena []byte
	ends := make([]int, s.rows)
	for i := range s.rows {
		if i&0xffff == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		if arena, err = d.bytes(i+1, "id", arena); err != nil {
			return nil, err
		}
		ends[i] = len(arena)
	}
	all, at := string(arena), 0
	for i, e := range ends {
		t.IDs[i], at = all[at:e], e
	}
	for i := range s.rows {
		x, err := d.uvarint(i+1, "line")
		if err != nil {
			return nil, err
		}
		if x > math.MaxInt {
			return nil, d.fail(i+1, "", fmt.Sprintf("line %d is out of range", x))
		}
		t.Lines[i] = int(x)
	}
	buf := make([]byte, chunkBytes)
	for _, f := range s.fields {
		col := make([]float64, s.rows)
		for at := 0; at < s.rows; {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			k := min(s.rows-at, chunkBytes/8)
			b := buf[:8*k]
			if _, err := io.ReadFull(d.br, b); err != nil {
				return nil, d.fail(at+1, catalog.Fields[f].Name, eof(err).Error())
			}
			for j := range col[at : at+k] {
				col[at+j] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*j:]))
			}
			at += k
		}
		t.Cols[f] = col
	}
	if n, err := d.br.Read(buf[:1]); n > 0 || err != io.EOF || d.left() != 0 {
		if n == 0 && err != nil && err != io.EOF {
			return nil, d.fail(0, "", err.Error())
		}
		return nil, d.fail(0, "", "bytes follow the last column")
	}
	if d.c.crc != d.h.crc {
		return nil, failAt(d.name, int64(len(magic)+4), "", ErrCorrupt,
			fmt.Sprintf("checksum mismatch: the payload's CRC-32C is %08x, the header says %08x", d.c.crc, d.h.crc))
	}
	return t, nil
}
