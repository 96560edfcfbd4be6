package catalog

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Layout is a Spec resolved against one file's header: which column feeds
// which canonical field, with which unit factor, and which cells mean
// missing. It is read-only once made, so conversion goroutines share it.
type Layout struct {
	Header  []string
	Columns []Column // the numeric columns, in header order
	IDIndex int      // 0-based position of the id column
	markers []string // cell texts meaning missing, besides the empty one
	distMag bool     // distance comes as a distance modulus
	// Rows says that the positions a reader passes are 1-based rows of a
	// binary table, not lines of a text file.
	Rows bool
}

// NullMarkers are the non-empty cell texts that mean missing.
func (l *Layout) NullMarkers() []string { return l.markers }

// IsNull reports whether a cell means missing.
func (l *Layout) IsNull(s string) bool {
	if s == "" {
		return true
	}
	for _, m := range l.markers {
		if s == m {
			return true
		}
	}
	return false
}

// IsNullBytes is IsNull for a cell still in the reader's buffer.
func (l *Layout) IsNullBytes(c []byte) bool {
	if len(c) == 0 {
		return true
	}
	for _, m := range l.markers {
		if string(c) == m {
			return true
		}
	}
	return false
}

// Width is the number of values a Batch stores per row: one per column,
// plus the distance modulus and its error when distances come as moduli.
func (l *Layout) Width() int {
	if l.distMag {
		return len(l.Columns) + 2
	}
	return len(l.Columns)
}

// ConvertRecord converts the mapped text cells of rec (in header order)
// into row, in canonical units, or returns why the row is set aside.
// lineOf(col) is the line on which field col starts (a text format's quoted
// cells may span lines); lineOf(0) is the line of the record.
func (l *Layout) ConvertRecord(rec []string, row *[NumFields]float64, lineOf func(col int) int) *Quarantine {
	bad := func(col int, reason string, err error) *Quarantine {
		q := &Quarantine{Line: lineOf(0), Column: col + 1, Reason: reason, Err: err}
		if col < len(rec) {
			q.Value = rec[col]
			q.ColumnName = l.Header[col]
			q.Line = lineOf(col)
		}
		return q
	}
	if len(rec) != len(l.Header) {
		col := min(len(rec), len(l.Header))
		return &Quarantine{Line: lineOf(0), Column: col + 1, Err: ErrFieldCount,
			Reason: fmt.Sprintf("%s: row has %d fields, header has %d", ErrFieldCount, len(rec), len(l.Header))}
	}
	if l.IsNull(rec[l.IDIndex]) {
		return bad(l.IDIndex, ErrMissingValue.Error()+": id is required", ErrMissingValue)
	}
	for _, c := range l.Columns {
		s := rec[c.Index]
		if l.IsNull(s) {
			if c.Field == RA || c.Field == Dec {
				return bad(c.Index, fmt.Sprintf("%s: %s is required", ErrMissingValue, Fields[c.Field].Name), ErrMissingValue)
			}
			row[c.Field] = math.NaN()
			continue
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			if t := strings.TrimSpace(s); t != s {
				v, err = strconv.ParseFloat(t, 64)
			}
		}
		if err != nil {
			return bad(c.Index, ErrNotNumber.Error(), ErrNotNumber)
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return bad(c.Index, ErrNotNumber.Error()+": not finite (list it in null_markers if it means missing)", ErrNotNumber)
		}
		v *= c.Factor
		if reason := CheckRange(c.Field, v); reason != "" {
			return bad(c.Index, ErrOutOfRange.Error()+": "+reason, ErrOutOfRange)
		}
		row[c.Field] = v
	}
	return nil
}

// Batch is rows converted to canonical numbers, in file order, waiting for
// Builder.Add. A reader may fill several batches at once on separate
// goroutines: Begin, then per row Add or Reject, then End.
type Batch struct {
	Vals  [][]float64 // Layout.Width() columns of one value per row
	row   [NumFields]float64
	lines []int
	bad   []*Quarantine // per row; nil when the row converted cleanly
	// The ids of the rows that converted cleanly, back to back in one
	// string (so that the table's ids pin no reader buffer): row r's id is
	// ids[idOff[r]:idOff[r+1]], its hash idHash[r].
	ids    string
	idBuf  []byte
	idOff  []int32
	idHash []uint64
	layout *Layout
}

// Begin empties the batch for up to rows rows of layout l.
func (b *Batch) Begin(l *Layout, rows int) {
	b.layout = l
	for i := range b.row {
		b.row[i] = math.NaN() // fields without a column stay missing
	}
	if w := l.Width(); len(b.Vals) != w {
		b.Vals = make([][]float64, w)
	}
	for i, c := range b.Vals {
		if cap(c) < rows {
			c = make([]float64, rows)
		}
		b.Vals[i] = c[:rows]
	}
	b.lines, b.bad = b.lines[:0], b.bad[:0]
	b.ids, b.idBuf, b.idOff, b.idHash = "", b.idBuf[:0], append(b.idOff[:0], 0), b.idHash[:0]
}

// Row is the scratch row the next row's canonical values go into, indexed
// by Field; fields without a column hold NaN.
func (b *Batch) Row() *[NumFields]float64 { return &b.row }

// Add stores the next row, read at line, from Row() and its id cell.
func (b *Batch) Add(line int, id []byte) {
	r := len(b.bad)
	b.lines = append(b.lines, line)
	b.bad = append(b.bad, nil)
	b.idBuf = append(b.idBuf, id...)
	b.idOff = append(b.idOff, int32(len(b.idBuf)))
	b.idHash = append(b.idHash, hashID(b.idBuf[b.idOff[r]:]))
	l, row := b.layout, &b.row
	var mu, muErr float64
	if l.distMag {
		mu, muErr = row[Distance], row[DistanceErr]
		row[Distance], row[DistanceErr] = DistanceFromModulus(mu, muErr)
	}
	for i, c := range l.Columns {
		b.Vals[i][r] = row[c.Field]
	}
	if l.distMag {
		n := len(l.Columns)
		b.Vals[n][r], b.Vals[n+1][r] = mu, muErr
	}
}

// Reject sets the next row, read at line, aside for q.
func (b *Batch) Reject(line int, q *Quarantine) {
	b.lines = append(b.lines, line)
	b.bad = append(b.bad, q)
	b.idOff = append(b.idOff, int32(len(b.idBuf)))
	b.idHash = append(b.idHash, 0)
}

// End finishes the batch.
func (b *Batch) End() { b.ids = string(b.idBuf) }

// Len is the number of rows added or rejected.
func (b *Batch) Len() int { return len(b.bad) }

// RawRows is a batch's rows as the reader read them, for the rows the
// Builder sets aside.
type RawRows interface {
	// Record is the raw fields of row r, nil when the row could not be
	// split into fields.
	Record(r int) []string
	// FieldLine is the line on which field col of row r starts.
	FieldLine(r, col int) int
}

// Builder assembles a Table from batches in file order: it finds repeated
// ids, quarantines rows (or, when strict, stops at the first problem),
// appends the kept rows' columns and keeps the Report.
type Builder struct {
	layout *Layout
	spec   Spec
	strict bool
	t      *Table
	rep    *Report
	seen   idIndex // first kept row of every id
	kept   []int   // rows of the current batch that go into the table
	one    Batch   // for AddRecord
}

// NewBuilder checks spec, resolves it against header, read at headerLine
// (0 for a format without lines), and starts the table. Its errors are
// *position.Error values wrapping ErrBadSpec, ErrMissingColumn or
// ErrBadHeader.
func NewBuilder(spec Spec, header []string, headerLine int, opt ReadOptions) (*Builder, error) {
	units, err := spec.units()
	if err != nil {
		return nil, fileError(spec.File, 0, 0, "", err.Error(), err)
	}
	cols, idIdx, mapped, unused, err := spec.plan(header, units, headerLine)
	if err != nil {
		return nil, err
	}
	b := newBuilder(spec, header, cols, idIdx, units[Distance] == "mag", opt)
	b.rep.Mapped, b.rep.Unused = mapped, unused
	return b, nil
}

// NewBuilderFromMeta is NewBuilder for a file that describes its columns:
// they map by the campaign, then by UCD, then by name (Spec.Map), in the
// unit the campaign or else the file gives. rows says that the positions
// the reader passes are 1-based rows of a binary table. Every column keeps
// its index in cols.
func NewBuilderFromMeta(spec Spec, cols []ColumnMeta, rows bool, opt ReadOptions) (*Builder, *Mapping, error) {
	if _, err := spec.units(); err != nil {
		return nil, nil, fileError(spec.File, 0, 0, "", err.Error(), err)
	}
	m, err := spec.Map(cols)
	if err != nil {
		return nil, nil, err
	}
	header := make([]string, len(cols))
	for i, c := range cols {
		header[i] = c.Name
	}
	for name, h := range spec.Columns {
		if f, _ := FieldByName(name); m.Column[f] < 0 {
			return nil, nil, fileError(spec.File, 0, 0, h,
				fmt.Sprintf("%s: the file has no column %q (mapped to %s)", ErrMissingColumn, h, name), ErrMissingColumn)
		}
	}
	for _, f := range []Field{ID, RA, Dec} {
		if m.Column[f] < 0 {
			return nil, nil, fileError(spec.File, 0, 0, "",
				fmt.Sprintf("%s: no column for required field %s (by name, UCD or [catalog.columns])", ErrMissingColumn, Fields[f].Name), ErrMissingColumn)
		}
	}
	var bcols []Column
	used := make([]bool, len(cols))
	mapped, by := make(map[string]string), make(map[string]string)
	for f := Field(0); f < NumFields; f++ {
		i := m.Column[f]
		if i < 0 {
			continue
		}
		used[i] = true
		mapped[Fields[f].Name], by[Fields[f].Name] = cols[i].Name, m.MappedBy[f]
		if f != ID {
			bcols = append(bcols, Column{Index: i, Field: f, Factor: unitFactor(f, m.Unit[f])})
		}
	}
	sort.Slice(bcols, func(a, b int) bool { return bcols[a].Index < bcols[b].Index })
	if m.Unit[DistanceErr] == "mag" && m.Unit[Distance] != "mag" || m.Unit[Distance] == "mag" && m.Column[DistanceErr] >= 0 && m.Unit[DistanceErr] != "mag" {
		return nil, nil, fileError(spec.File, 0, 0, "", fmt.Sprintf("%s: distance and distance_err must both be in mag or neither", ErrBadSpec), ErrBadSpec)
	}
	b := newBuilder(spec, header, bcols, m.Column[ID], m.Unit[Distance] == "mag", opt)
	b.layout.Rows = rows
	b.rep.Mapped, b.rep.MappedBy = mapped, by
	for i, c := range cols {
		if !used[i] {
			b.rep.Unused = append(b.rep.Unused, c.Name)
		}
	}
	return b, m, nil
}

// newBuilder starts the table and the report for a resolved layout.
func newBuilder(spec Spec, header []string, cols []Column, idIdx int, distMag bool, opt ReadOptions) *Builder {
	l := &Layout{Header: header, Columns: cols, IDIndex: idIdx, distMag: distMag}
	markers := spec.NullMarkers
	if markers == nil {
		markers = DefaultNullMarkers()
	}
	for _, m := range markers {
		if m != "" {
			l.markers = append(l.markers, m)
		}
	}
	t := &Table{Name: spec.Name, Release: spec.Release, Role: spec.Role, EpochJyr: spec.EpochJyr}
	for _, c := range cols {
		t.Cols[c.Field] = make([]float64, 0, 1024)
	}
	if l.distMag {
		if t.Cols[Distance] != nil {
			t.Cols[DistMod] = make([]float64, 0, 1024)
		}
		if t.Cols[DistanceErr] != nil {
			t.Cols[DistModErr] = make([]float64, 0, 1024)
		}
	}
	rep := &Report{File: spec.File, Header: header}
	return &Builder{layout: l, spec: spec, strict: opt.Strict, t: t, rep: rep}
}

// Layout is how the builder reads the file's columns.
func (b *Builder) Layout() *Layout { return b.layout }

// Report is the ingest report so far.
func (b *Builder) Report() *Report { return b.rep }

// Len is the number of rows kept so far.
func (b *Builder) Len() int { return b.t.Len() }

// prefetchRows is how many rows' id slots Add loads ahead in one go:
// enough to overlap their cache misses, few enough to stay in cache.
const prefetchRows = 512

// Add takes the rows of bt, whose raw form raw gives, into the table. In
// strict mode the first row set aside is returned as a *position.Error.
func (b *Builder) Add(bt *Batch, raw RawRows) error {
	t, rep, seen := b.t, b.rep, &b.seen
	kept := b.kept[:0]
	idIdx := b.layout.IDIndex
	n := bt.Len()
	for r := range n {
		if r%prefetchRows == 0 {
			seen.prefetch(bt.idHash[r:min(r+prefetchRows, n)])
		}
		q := bt.bad[r]
		rep.RowsRead++
		var id string
		if q == nil {
			id = bt.ids[bt.idOff[r]:bt.idOff[r+1]]
			if first := seen.find(id, bt.idHash[r], t.IDs); first >= 0 {
				where := "line"
				if b.layout.Rows {
					where = "row"
				}
				q = &Quarantine{Column: idIdx + 1, ColumnName: b.layout.Header[idIdx], Value: id,
					Reason: fmt.Sprintf("%s: first seen on %s %d", ErrDuplicateID, where, t.Lines[first]), Err: ErrDuplicateID}
				b.layout.place(q, raw.FieldLine(r, idIdx))
			}
		}
		if q != nil {
			q.Record = append([]string(nil), raw.Record(r)...)
			if b.strict {
				return q.Error(b.spec.File)
			}
			rep.Quarantined = append(rep.Quarantined, *q)
			continue
		}
		t.IDs = append(t.IDs, id)
		t.Lines = append(t.Lines, bt.lines[r])
		seen.insert(t.Len()-1, bt.idHash[r], t.IDs)
		kept = append(kept, r)
	}
	b.appendColumns(bt, kept)
	b.kept = kept
	return nil
}

func (b *Builder) appendColumns(bt *Batch, kept []int) {
	t, cols := b.t, b.layout.Columns
	for i, c := range cols {
		t.Cols[c.Field] = appendKept(t.Cols[c.Field], bt.Vals[i], kept)
	}
	if b.layout.distMag {
		if t.Cols[DistMod] != nil {
			t.Cols[DistMod] = appendKept(t.Cols[DistMod], bt.Vals[len(cols)], kept)
		}
		if t.Cols[DistModErr] != nil {
			t.Cols[DistModErr] = appendKept(t.Cols[DistModErr], bt.Vals[len(cols)+1], kept)
		}
	}
}

// appendKept appends vals[r] for every r in kept.
func appendKept(dst, vals []float64, kept []int) []float64 {
	if len(kept) == len(vals) {
		return append(dst, vals...)
	}
	for _, r := range kept {
		dst = append(dst, vals[r])
	}
	return dst
}

// oneRecord is the RawRows of a batch of one record on one line.
type oneRecord struct {
	line int
	rec  []string
}

func (o oneRecord) Record(int) []string    { return o.rec }
func (o oneRecord) FieldLine(int, int) int { return o.line }

// AddRecord converts and takes one row of text cells in header order, read
// at line: the simple way in for a reader that needs no batches.
func (b *Builder) AddRecord(line int, rec []string) error {
	bt := &b.one
	bt.Begin(b.layout, 1)
	at := func(int) int { return line }
	if q := b.layout.ConvertRecord(rec, bt.Row(), at); q != nil {
		bt.Reject(line, q)
	} else {
		bt.Add(line, []byte(rec[b.layout.IDIndex]))
	}
	bt.End()
	return b.Add(bt, oneRecord{line, rec})
}

// Reserve grows the table and the id index once for about rows rows,
// instead of doubling as rows come; a reader calls it when it knows or
// estimates the row count.
func (b *Builder) Reserve(rows int) {
	t := b.t
	grow := func(c []float64) []float64 {
		if c == nil || cap(c) >= rows {
			return c
		}
		n := make([]float64, len(c), rows)
		copy(n, c)
		return n
	}
	for f := range t.Cols {
		t.Cols[f] = grow(t.Cols[f])
	}
	ids := make([]string, len(t.IDs), rows)
	copy(ids, t.IDs)
	t.IDs = ids
	lines := make([]int, len(t.Lines), rows)
	copy(lines, t.Lines)
	t.Lines = lines
	b.seen.reserve(rows, t.IDs)
}

// Finish completes the table and the report: the row counts, and ra_err
// and dec_err filled from Spec.PositionErrMas.
func (b *Builder) Finish() (*Table, *Report) {
	b.rep.RowsKept = b.t.Len()
	if b.spec.PositionErrMas > 0 {
		b.rep.PositionErrFilled = fillPositionErr(b.t, b.spec.PositionErrMas)
	}
	return b.t, b.rep
}

// CheckRange returns why v, in canonical units, is impossible for f, or "".
func CheckRange(f Field, v float64) string {
	switch f {
	case RA:
		if v < 0 || v >= 360 {
			return "ra must be in [0, 360) deg"
		}
	case Dec:
		if v < -90 || v > 90 {
			return "dec must be in [-90, 90] deg"
		}
	case RAErr, DecErr, ParallaxErr, PMRAErr, PMDecErr, RVErr, DistanceErr:
		if v < 0 {
			return "an uncertainty cannot be negative"
		}
	case CorrRADec, CorrParallaxPMRA, CorrParallaxPMDec, CorrPMRAPMDec:
		if v < -1 || v > 1 {
			return "a correlation must be in [-1, 1]"
		}
	}
	return ""
}

// fillPositionErr puts errMas into absent or missing ra_err/dec_err cells.
func fillPositionErr(t *Table, errMas float64) int {
	filled := 0
	for _, f := range []Field{RAErr, DecErr} {
		c := t.Cols[f]
		if c == nil {
			c = make([]float64, t.Len())
			for i := range c {
				c[i] = math.NaN()
			}
			t.Cols[f] = c
		}
		for i, v := range c {
			if math.IsNaN(v) {
				c[i] = errMas
				filled++
			}
		}
	}
	return filled
}

// place sets q's position: a line of a text file, or a row of a binary
// table.
func (l *Layout) place(q *Quarantine, at int) {
	if l.Rows {
		q.Row, q.Line = at, 0
	} else {
		q.Line = at
	}
}

// MissingID is the quarantine of a row, at position at, whose id is null.
func (l *Layout) MissingID(at int) *Quarantine {
	q := &Quarantine{Column: l.IDIndex + 1, ColumnName: l.Header[l.IDIndex], Reason: ErrMissingValue.Error() + ": id is required", Err: ErrMissingValue}
	l.place(q, at)
	return q
}

// ConvertValues converts one row given as numbers in the file's units into
// row, in canonical units, or returns why the row is set aside: vals[k] is
// the value of Columns[k], NaN when the file marks it null. at is the row's
// position (a row of a binary table when Rows).
func (l *Layout) ConvertValues(vals []float64, row *[NumFields]float64, at int) *Quarantine {
	for k, c := range l.Columns {
		v := vals[k]
		var reason string
		var err error
		switch {
		case math.IsNaN(v):
			if c.Field == RA || c.Field == Dec {
				reason, err = fmt.Sprintf("%s: %s is required", ErrMissingValue, Fields[c.Field].Name), ErrMissingValue
				break
			}
			row[c.Field] = math.NaN()
			continue
		case math.IsInf(v, 0):
			reason, err = ErrNotNumber.Error()+": not finite", ErrNotNumber
		default:
			v *= c.Factor
			if r := CheckRange(c.Field, v); r != "" {
				reason, err = ErrOutOfRange.Error()+": "+r, ErrOutOfRange
			}
		}
		if err != nil {
			q := &Quarantine{Column: c.Index + 1, ColumnName: l.Header[c.Index], Value: strconv.FormatFloat(vals[k], 'g', -1, 64), Reason: reason, Err: err}
			l.place(q, at)
			return q
		}
		row[c.Field] = v
	}
	return nil
}

// ConvertColumns is ConvertValues for rows [0, n) at once, column by
// column, in place: vals[k][r] is the value of Columns[k] in row r, in
// the file's units, NaN when the file marks it null; row r is at position
// first+r. A row whose bad[r] is already set (say, its id is missing) is
// left alone; any other row that ConvertValues would set aside gets the
// same quarantine in bad[r], and the values of the rest become what
// ConvertValues would store. Columns are checked in order, so a row's
// quarantine names the same first bad column.
func (l *Layout) ConvertColumns(vals [][]float64, n, first int, bad []*Quarantine) {
	bad = bad[:n]
	for k, c := range l.Columns {
		col := vals[k][:n]
		required := c.Field == RA || c.Field == Dec
		lo, hi := rangeOf(c.Field)
		for r, v := range col {
			if bad[r] != nil {
				continue
			}
			if v == v && v-v == 0 { // finite
				v *= c.Factor
				if !(v >= lo && v <= hi) || c.Field == RA && v == 360 {
					if reason := CheckRange(c.Field, v); reason != "" {
						bad[r] = l.valueQuarantine(c, col[r], ErrOutOfRange.Error()+": "+reason, ErrOutOfRange, first+r)
						continue
					}
				}
				col[r] = v
				continue
			}
			switch {
			case math.IsNaN(v) && required:
				bad[r] = l.valueQuarantine(c, v, fmt.Sprintf("%s: %s is required", ErrMissingValue, Fields[c.Field].Name), ErrMissingValue, first+r)
			case math.IsNaN(v):
				col[r] = math.NaN()
			default:
				bad[r] = l.valueQuarantine(c, v, ErrNotNumber.Error()+": not finite", ErrNotNumber, first+r)
			}
		}
	}
}

// rangeOf is a closed interval holding every value CheckRange accepts for
// f, and no value it rejects but ra's 360.
func rangeOf(f Field) (lo, hi float64) {
	switch f {
	case RA:
		return 0, 360
	case Dec:
		return -90, 90
	case RAErr, DecErr, ParallaxErr, PMRAErr, PMDecErr, RVErr, DistanceErr:
		return 0, math.Inf(1)
	case CorrRADec, CorrParallaxPMRA, CorrParallaxPMDec, CorrPMRAPMDec:
		return -1, 1
	}
	return math.Inf(-1), math.Inf(1)
}

func (l *Layout) valueQuarantine(c Column, v float64, reason string, err error, at int) *Quarantine {
	q := &Quarantine{Column: c.Index + 1, ColumnName: l.Header[c.Index], Value: strconv.FormatFloat(v, 'g', -1, 64), Reason: reason, Err: err}
	l.place(q, at)
	return q
}

// AddConverted stores the next row, read at line, whose values already
// stand converted in Vals (by ConvertColumns), with its id cell: Add for
// a reader that fills the batch column by column.
func (b *Batch) AddConverted(line int, id []byte) {
	r := len(b.bad)
	b.lines = append(b.lines, line)
	b.bad = append(b.bad, nil)
	b.idBuf = append(b.idBuf, id...)
	b.idOff = append(b.idOff, int32(len(b.idBuf)))
	b.idHash = append(b.idHash, hashID(b.idBuf[b.idOff[r]:]))
	l := b.layout
	if !l.distMag {
		return
	}
	mu, muErr := math.NaN(), math.NaN()
	dc, ec := -1, -1
	for i, c := range l.Columns {
		switch c.Field {
		case Distance:
			dc, mu = i, b.Vals[i][r]
		case DistanceErr:
			ec, muErr = i, b.Vals[i][r]
		}
	}
	d, de := DistanceFromModulus(mu, muErr)
	if dc >= 0 {
		b.Vals[dc][r] = d
	}
	if ec >= 0 {
		b.Vals[ec][r] = de
	}
	n := len(l.Columns)
	b.Vals[n][r], b.Vals[n+1][r] = mu, muErr
}
