package catalog

import (
	"bytes"
	"compress/gzip"
	"context"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"
)

// Spec says where a catalog is and how to read it.
type Spec struct {
	Name     string
	File     string // path to a .csv or .csv.gz file
	Role     Role
	EpochJyr float64 // Julian year of the positions
	Release  string
	// Columns maps a canonical field name to a file header. A header equal
	// to a canonical name maps onto that field unless the field is mapped
	// explicitly.
	Columns map[string]string
	// Units maps a canonical field name to the unit used by the file, where
	// it differs from the canonical one (see CheckUnit).
	Units map[string]string
	// NullMarkers are cell texts meaning "missing"; nil means
	// DefaultNullMarkers. An empty cell is always missing.
	NullMarkers []string
	// PositionErrMas, when > 0, is used for ra_err and dec_err where the
	// file has no such column or the cell is missing.
	PositionErrMas float64
}

// ReadOptions tune Read.
type ReadOptions struct {
	// Strict turns the first row problem into a fatal error instead of
	// quarantining the row.
	Strict bool
	// Workers is how many goroutines convert numbers, besides the one that
	// splits lines and the caller's, which builds the table; 0 means
	// runtime.GOMAXPROCS(0).
	Workers int
}

// Quarantine is a row set aside, with the reason.
type Quarantine struct {
	Line       int
	Column     int // 1-based field index; 0 for the row as a whole
	ColumnName string
	Value      string
	Reason     string
	Record     []string // the raw row
	Err        error    // sentinel, for errors.Is
}

// Report describes one ingest.
type Report struct {
	File     string
	SHA256   string // hex SHA-256 of the raw file bytes (compressed bytes for .gz)
	Header   []string
	RowsRead int // data rows seen; RowsRead == RowsKept + len(Quarantined)
	RowsKept int
	// Quarantined rows, in file order.
	Quarantined []Quarantine
	// Mapped gives, per canonical field name, the header it was read from.
	Mapped map[string]string
	// Unused lists headers that fed no field, so nothing is dropped unseen.
	Unused []string
	// PositionErrFilled counts ra_err/dec_err cells filled from
	// Spec.PositionErrMas.
	PositionErrFilled int
}

// DefaultNullMarkers returns the cell texts that mean "missing" when a
// campaign names none.
func DefaultNullMarkers() []string { return []string{"", "NaN", "null"} }

// batchRows is how many rows the splitting goroutine hands over at a time; the
// context is checked between batches.
const batchRows = 4096

// rowRef locates one record inside a batch.
type rowRef struct {
	start, end int             // fields[start:end], or text[start:end] for a plain row
	line       int             // line where the record starts
	offset     int64           // input bytes consumed after the record
	parseErr   *csv.ParseError // malformed record, quarantined
	plain      bool            // a quote-free line in text, not split into fields
}

type batch struct {
	text   []byte   // plain rows' lines, back to back
	fields []string // the fields of the other rows
	rows   []rowRef
	cols   [][]float64   // parsed values, rowParser.width() columns of one value per row
	quar   []*Quarantine // per row; nil when the row parsed cleanly
	// The ids of the rows that parsed cleanly, back to back in one string
	// (so that the table's ids pin no line text): row r's id is
	// ids[idOff[r]:idOff[r+1]], its hash idHash[r].
	ids    string
	idBuf  []byte
	idOff  []int32
	idHash []uint64
	fatal  error
	parsed chan struct{} // closed once parseBatch is done with the batch
	free   chan *batch
}

func (b *batch) recycle() {
	b.text, b.fields, b.rows, b.quar = b.text[:0], b.fields[:0], b.rows[:0], b.quar[:0]
	b.ids, b.idOff, b.idHash = "", b.idOff[:0], b.idHash[:0]
	select {
	case b.free <- b:
	default:
	}
}

// record returns the fields of row r.
func (b *batch) record(r int) []string {
	br := &b.rows[r]
	if br.plain {
		return strings.Split(string(b.text[br.start:br.end]), ",")
	}
	return b.fields[br.start:br.end]
}

// readBatches runs the reader as a pipeline: one goroutine cuts the input
// into batches of records, workers goroutines convert their numbers
// (rp.parseBatch, which only reads rp), and the caller takes the batches in
// file order, checks ids and appends to the table. stop must be called when
// the caller is done; it waits for every goroutine.
func readBatches(ls *lineSplitter, name string, rp *rowParser, workers int) (<-chan *batch, func()) {
	work := make(chan *batch, workers)
	out := make(chan *batch, workers+2) // file order
	free := make(chan *batch, 2*workers+4)
	done := make(chan struct{})
	for range cap(free) {
		free <- &batch{rows: make([]rowRef, 0, batchRows), free: free}
	}
	var wg sync.WaitGroup
	wg.Add(1 + workers)
	go func() {
		defer wg.Done()
		defer close(out)
		defer close(work)
		for {
			var b *batch
			select {
			case b = <-free:
			case <-done:
				return
			}
			eof := ls.fillBatch(name, b)
			b.parsed = make(chan struct{})
			select {
			case out <- b:
			case <-done:
				return
			}
			select {
			case work <- b:
			case <-done:
				return
			}
			if eof {
				return
			}
		}
	}()
	for range workers {
		go func() {
			defer wg.Done()
			for b := range work {
				rp.parseBatch(b)
				close(b.parsed)
			}
		}()
	}
	var once sync.Once
	return out, func() {
		once.Do(func() {
			close(done)
			for range out {
			}
			wg.Wait()
		})
	}
}

// rowParser converts the cells of a batch to canonical numbers.
type rowParser struct {
	header  []string
	plans   []colPlan
	idIdx   int
	markers []string // cell texts meaning missing, besides the empty one
	distMag bool
	// roles[k] says what column k feeds (see setRoles); numericMarker is set
	// when a null marker reads as a number.
	roles         []int
	numericMarker bool
}

func (rp *rowParser) isNull(s string) bool {
	if s == "" {
		return true
	}
	for _, m := range rp.markers {
		if s == m {
			return true
		}
	}
	return false
}

func (rp *rowParser) isNullBytes(c []byte) bool {
	if len(c) == 0 {
		return true
	}
	for _, m := range rp.markers {
		if string(c) == m {
			return true
		}
	}
	return false
}

// width is the number of values stored per row: one per plan, plus the
// distance modulus and its error when distances come as moduli.
func (rp *rowParser) width() int {
	if rp.distMag {
		return len(rp.plans) + 2
	}
	return len(rp.plans)
}

func (rp *rowParser) parseBatch(b *batch) {
	w := rp.width()
	var row [NumFields]float64
	for i := range row {
		row[i] = math.NaN() // fields without a column stay missing
	}
	if len(b.cols) != w {
		b.cols = make([][]float64, w)
	}
	for i, c := range b.cols {
		if cap(c) < len(b.rows) {
			c = make([]float64, batchRows)
		}
		b.cols[i] = c[:len(b.rows)]
	}
	b.idBuf = b.idBuf[:0]
	b.idOff = append(b.idOff[:0], 0)
	for r := range b.rows {
		br := &b.rows[r]
		var q *Quarantine
		var id []byte
		ok := false
		if br.plain {
			line := b.text[br.start:br.end]
			if id, ok = rp.parsePlain(line, &row); !ok {
				// Let the general code below find and word the problem.
				rec := strings.Split(string(line), ",")
				br.start, br.plain = len(b.fields), false
				b.fields = append(b.fields, rec...)
				br.end = len(b.fields)
			}
		}
		if !ok {
			if pe := br.parseErr; pe != nil {
				q = &Quarantine{Line: pe.StartLine, Column: 0, Reason: pe.Err.Error(), Err: ErrMalformed}
				if pe.Line != pe.StartLine {
					q.Reason += fmt.Sprintf(" (at line %d)", pe.Line)
				}
			} else {
				lf := lineFields{start: br.line, rec: b.fields[br.start:br.end]}
				q = parseRow(lf.rec, rp.header, rp.plans, rp.idIdx, rp.isNull, &row, &lf)
				if q == nil {
					b.idBuf = append(b.idBuf, lf.rec[rp.idIdx]...)
				}
			}
		} else {
			b.idBuf = append(b.idBuf, id...)
		}
		b.idOff = append(b.idOff, int32(len(b.idBuf)))
		b.quar = append(b.quar, q)
		if q != nil {
			b.idHash = append(b.idHash, 0)
			continue
		}
		b.idHash = append(b.idHash, hashID(b.idBuf[b.idOff[r]:]))
		var mu, muErr float64
		if rp.distMag {
			mu, muErr = row[Distance], row[DistanceErr]
			row[Distance], row[DistanceErr] = DistanceFromModulus(mu, muErr)
		}
		for i, p := range rp.plans {
			b.cols[i][r] = row[p.field]
		}
		if rp.distMag {
			np := len(rp.plans)
			b.cols[np][r], b.cols[np+1][r] = mu, muErr
		}
	}
	b.ids = string(b.idBuf)
}

// Column roles of a plain row, besides an index into rowParser.plans.
const (
	roleSkip = -1 // a column no field reads
	roleID   = -2
)

// setRoles prepares parsePlain for the header.
func (rp *rowParser) setRoles() {
	rp.roles = make([]int, len(rp.header))
	for k := range rp.roles {
		rp.roles[k] = roleSkip
	}
	rp.roles[rp.idIdx] = roleID
	for i, p := range rp.plans {
		rp.roles[p.index] = i
	}
	for _, m := range rp.markers {
		if _, ok := parseDecimal([]byte(m)); ok {
			rp.numericMarker = true
		}
	}
}

// parsePlain converts a quote-free line into row and returns its id cell,
// splitting and reading numbers in one pass. It reports false whenever the
// line is not plainly right (wrong field count, a missing id or position, a
// number strconv refuses, a value out of range), leaving the verdict and
// its wording to parseRow.
func (rp *rowParser) parsePlain(line []byte, row *[NumFields]float64) ([]byte, bool) {
	var id []byte
	pos, n := 0, len(line)
	last := len(rp.roles) - 1
	for k, role := range rp.roles {
		var end int
		if role >= 0 {
			v, e, ok := scanDecimal(line, pos)
			end = e
			if end < n && line[end] != ',' {
				ok = false // more than a plain decimal: find the cell's end
				if j := bytes.IndexByte(line[end:], ','); j >= 0 {
					end += j
				} else {
					end = n
				}
			}
			p := &rp.plans[role]
			cell := line[pos:end]
			if (!ok || rp.numericMarker) && rp.isNullBytes(cell) {
				if p.field == RA || p.field == Dec {
					return nil, false
				}
				row[p.field] = math.NaN()
			} else {
				if !ok {
					var err error
					if v, err = strconv.ParseFloat(string(cell), 64); err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
						return nil, false
					}
				}
				v *= p.factor
				if checkRange(p.field, v) != "" {
					return nil, false
				}
				row[p.field] = v
			}
		} else {
			end = n
			if j := bytes.IndexByte(line[pos:], ','); j >= 0 {
				end = pos + j
			}
			if role == roleID {
				id = line[pos:end]
			}
		}
		if (k == last) != (end == n) {
			return nil, false // more or fewer fields than the header
		}
		pos = end + 1
	}
	if rp.isNullBytes(id) {
		return nil, false
	}
	return id, true
}

// lineFields gives the line on which each field of a record starts; quoted
// fields may span lines (the reader turns their line breaks into \n).
type lineFields struct {
	start int
	rec   []string
}

func (lf *lineFields) pos(col int) int {
	line := lf.start
	for _, f := range lf.rec[:min(col, len(lf.rec))] {
		line += strings.Count(f, "\n")
	}
	return line
}

// colPlan says how to read one CSV column.
type colPlan struct {
	index  int // field index in the record, 0-based
	field  Field
	factor float64
	header string
}

// Read ingests one catalog file into canonical units. File-level problems
// are returned as *FileError; row problems quarantine the row (or, with
// opt.Strict, are returned as *RowError). The Report is returned, possibly
// partial, with every error except an unopenable file.
func Read(ctx context.Context, spec Spec, opt ReadOptions) (*Table, *Report, error) {
	return read(ctx, spec, opt, false)
}

// read is Read; forceCSV has encoding/csv split every record, the reference
// the tests hold the line splitter to.
func read(ctx context.Context, spec Spec, opt ReadOptions, forceCSV bool) (*Table, *Report, error) {
	name := spec.File
	rep := &Report{File: name}
	units, err := checkSpec(spec)
	if err != nil {
		return nil, rep, &FileError{File: name, Reason: err.Error(), Err: err}
	}
	f, err := os.Open(spec.File)
	if err != nil {
		return nil, nil, &FileError{File: name, Reason: err.Error(), Err: fmt.Errorf("%w: %w", ErrNoFile, err)}
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, nil, &FileError{File: name, Reason: err.Error(), Err: fmt.Errorf("%w: %w", ErrNoFile, err)}
	}
	hr := newHashingReader(f)
	defer hr.close()

	var in io.Reader = hr
	gz := strings.HasSuffix(strings.ToLower(name), ".gz")
	if gz {
		zr, err := gzip.NewReader(hr)
		if err != nil {
			return nil, rep, &FileError{File: name, Reason: "unreadable gzip: " + err.Error(), Err: fmt.Errorf("%w: %w", ErrUnreadable, err)}
		}
		defer zr.Close()
		in = zr
	}
	ls := newLineSplitter(in)
	if forceCSV {
		ls.handOver()
	}
	header, err := ls.readHeader()
	if err != nil {
		sentinel := ErrBadHeader
		var pe *csv.ParseError
		if err == io.EOF {
			err = errors.New("file is empty")
		} else if !errors.As(err, &pe) {
			sentinel = ErrUnreadable
		}
		return nil, rep, &FileError{File: name, Line: 1, Reason: "cannot read header: " + err.Error(), Err: fmt.Errorf("%w: %w", sentinel, err)}
	}
	header = append([]string(nil), header...)
	if len(header) > 0 {
		header[0] = strings.TrimPrefix(header[0], "\ufeff")
	}
	rep.Header = header
	plans, idIdx, mapped, unused, ferr := planColumns(name, header, spec, units)
	if ferr != nil {
		return nil, rep, ferr
	}
	rep.Mapped, rep.Unused = mapped, unused

	t := &Table{Name: spec.Name, Release: spec.Release, Role: spec.Role, EpochJyr: spec.EpochJyr}
	for _, p := range plans {
		t.Cols[p.field] = make([]float64, 0, 1024)
	}
	distMag := units[Distance] == "mag"
	if distMag {
		if t.Cols[Distance] != nil {
			t.Cols[DistMod] = make([]float64, 0, 1024)
		}
		if t.Cols[DistanceErr] != nil {
			t.Cols[DistModErr] = make([]float64, 0, 1024)
		}
	}
	markers := spec.NullMarkers
	if markers == nil {
		markers = DefaultNullMarkers()
	}
	rp := &rowParser{header: header, plans: plans, idIdx: idIdx, distMag: distMag}
	for _, m := range markers {
		if m != "" {
			rp.markers = append(rp.markers, m)
		}
	}
	rp.setRoles()
	var seen idIndex // first kept row of every id
	var kept []int   // rows of the current batch that go into the table
	presized := gz   // a gzip file's size says little about its rows
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	batches, stop := readBatches(ls, name, rp, workers)
	defer stop()
	for b := range batches {
		<-b.parsed
		if err := ctx.Err(); err != nil {
			return nil, rep, err
		}
		if b.fatal != nil {
			return nil, rep, b.fatal
		}
		kept = kept[:0]
		for r := range b.rows {
			if r%prefetchRows == 0 {
				seen.prefetch(b.idHash[r:min(r+prefetchRows, len(b.rows))])
			}
			br := &b.rows[r]
			q := b.quar[r]
			rep.RowsRead++
			var id string
			if q == nil {
				id = b.ids[b.idOff[r]:b.idOff[r+1]]
				if first := seen.find(id, b.idHash[r], t.IDs); first >= 0 {
					lf := lineFields{start: br.line, rec: b.record(r)}
					q = &Quarantine{Line: lf.pos(idIdx), Column: idIdx + 1, ColumnName: header[idIdx], Value: id,
						Reason: fmt.Sprintf("%s: first seen on line %d", ErrDuplicateID, t.Lines[first]), Err: ErrDuplicateID}
				}
			}
			if q != nil {
				if br.parseErr == nil {
					q.Record = append([]string(nil), b.record(r)...)
				}
				if opt.Strict {
					return nil, rep, q.rowError(name)
				}
				rep.Quarantined = append(rep.Quarantined, *q)
				continue
			}
			t.IDs = append(t.IDs, id)
			t.Lines = append(t.Lines, br.line)
			seen.insert(t.Len()-1, b.idHash[r], t.IDs)
			kept = append(kept, r)
		}
		for i, p := range plans {
			t.Cols[p.field] = appendKept(t.Cols[p.field], b.cols[i], kept)
		}
		if distMag {
			if t.Cols[DistMod] != nil {
				t.Cols[DistMod] = appendKept(t.Cols[DistMod], b.cols[len(plans)], kept)
			}
			if t.Cols[DistModErr] != nil {
				t.Cols[DistModErr] = appendKept(t.Cols[DistModErr], b.cols[len(plans)+1], kept)
			}
		}
		if !presized && t.Len() >= presizeAfterRows && len(b.rows) > 0 {
			presize(t, &seen, st.Size(), b.rows[len(b.rows)-1].offset)
			presized = true
		}
		b.recycle()
	}
	// Drain whatever the CSV reader left (gzip trailer etc.) so the hash
	// covers the whole file.
	if _, err := io.Copy(io.Discard, hr); err != nil {
		return nil, rep, &FileError{File: name, Reason: "read error: " + err.Error(), Err: fmt.Errorf("%w: %w", ErrUnreadable, err)}
	}
	rep.SHA256 = hex.EncodeToString(hr.sum())
	rep.RowsKept = t.Len()
	if spec.PositionErrMas > 0 {
		rep.PositionErrFilled = fillPositionErr(t, spec.PositionErrMas)
	}
	return t, rep, nil
}

// prefetchRows is how many rows' id slots the read loop loads ahead in one
// go: enough to overlap their cache misses, few enough to stay in cache.
const prefetchRows = 512

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

// presizeAfterRows is when Read estimates the row count of a plain file from
// the bytes used so far and grows every column once, instead of doubling.
const presizeAfterRows = 4096

func presize(t *Table, seen *idIndex, fileBytes, usedBytes int64) {
	if usedBytes <= 0 {
		return
	}
	est := int(float64(fileBytes)/float64(usedBytes)*float64(t.Len())*1.02) + 16
	grow := func(c []float64) []float64 {
		if c == nil || cap(c) >= est {
			return c
		}
		n := make([]float64, len(c), est)
		copy(n, c)
		return n
	}
	for f := range t.Cols {
		t.Cols[f] = grow(t.Cols[f])
	}
	ids := make([]string, len(t.IDs), est)
	copy(ids, t.IDs)
	t.IDs = ids
	lines := make([]int, len(t.Lines), est)
	copy(lines, t.Lines)
	t.Lines = lines
	seen.reserve(est, t.IDs)
}

func (q *Quarantine) rowError(file string) *RowError {
	return &RowError{File: file, Line: q.Line, Column: q.Column, ColumnName: q.ColumnName, Value: q.Value, Reason: q.Reason, Err: q.Err}
}

// parseRow converts the mapped cells of rec into row, in canonical units,
// or returns the first problem found.
func parseRow(rec, header []string, plans []colPlan, idIdx int, isNull func(string) bool, row *[NumFields]float64, lf *lineFields) *Quarantine {
	bad := func(col int, reason string, err error) *Quarantine {
		q := &Quarantine{Line: lf.start, Column: col + 1, Reason: reason, Err: err}
		if col < len(rec) {
			q.Value = rec[col]
			q.ColumnName = header[col]
			q.Line = lf.pos(col)
		}
		return q
	}
	if len(rec) != len(header) {
		col := min(len(rec), len(header))
		return &Quarantine{Line: lf.start, Column: col + 1, Err: ErrFieldCount,
			Reason: fmt.Sprintf("%s: row has %d fields, header has %d", ErrFieldCount, len(rec), len(header))}
	}
	if isNull(rec[idIdx]) {
		return bad(idIdx, ErrMissingValue.Error()+": id is required", ErrMissingValue)
	}
	for _, p := range plans {
		s := rec[p.index]
		if isNull(s) {
			if p.field == RA || p.field == Dec {
				return bad(p.index, fmt.Sprintf("%s: %s is required", ErrMissingValue, Fields[p.field].Name), ErrMissingValue)
			}
			row[p.field] = math.NaN()
			continue
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			if t := strings.TrimSpace(s); t != s {
				v, err = strconv.ParseFloat(t, 64)
			}
		}
		if err != nil {
			return bad(p.index, ErrNotNumber.Error(), ErrNotNumber)
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return bad(p.index, ErrNotNumber.Error()+": not finite (list it in null_markers if it means missing)", ErrNotNumber)
		}
		v *= p.factor
		if reason := checkRange(p.field, v); reason != "" {
			return bad(p.index, ErrOutOfRange.Error()+": "+reason, ErrOutOfRange)
		}
		row[p.field] = v
	}
	return nil
}

// checkRange returns why v, in canonical units, is impossible for f, or "".
func checkRange(f Field, v float64) string {
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

// checkSpec validates the field names and units of a spec and returns the
// unit of every field ("" = canonical).
func checkSpec(spec Spec) ([NumFields]string, error) {
	var units [NumFields]string
	for name := range spec.Columns {
		f, ok := FieldByName(name)
		if !ok || !Mappable(f) {
			return units, fmt.Errorf("%w: columns: unknown field %q", ErrBadSpec, name)
		}
	}
	for name, u := range spec.Units {
		f, ok := FieldByName(name)
		if !ok || !Mappable(f) {
			return units, fmt.Errorf("%w: units: unknown field %q", ErrBadSpec, name)
		}
		if err := CheckUnit(f, u); err != nil {
			return units, fmt.Errorf("%w: units: %w", ErrBadSpec, err)
		}
		units[f] = u
	}
	dm, em := units[Distance] == "mag", units[DistanceErr] == "mag"
	if em && !dm {
		return units, fmt.Errorf("%w: units: distance_err in mag requires distance in mag", ErrBadSpec)
	}
	if dm && units[DistanceErr] != "" && !em {
		return units, fmt.Errorf("%w: units: distance in mag requires distance_err in mag too", ErrBadSpec)
	}
	if dm {
		units[DistanceErr] = "mag"
	}
	if spec.PositionErrMas < 0 || math.IsNaN(spec.PositionErrMas) {
		return units, fmt.Errorf("%w: position_err_mas must be >= 0", ErrBadSpec)
	}
	return units, nil
}

// planColumns resolves the header against the spec.
func planColumns(file string, header []string, spec Spec, units [NumFields]string) (plans []colPlan, idIdx int, mapped map[string]string, unused []string, err error) {
	index := make(map[string]int, len(header))
	dupHeader := make(map[string]bool)
	for i, h := range header {
		if _, ok := index[h]; ok {
			dupHeader[h] = true
			continue
		}
		index[h] = i
	}
	used := make([]bool, len(header))
	mapped = make(map[string]string)
	idIdx = -1
	for f := Field(0); f < NumFields; f++ {
		if !Mappable(f) {
			continue
		}
		name := Fields[f].Name
		h, explicit := spec.Columns[name]
		if !explicit {
			h = name
		}
		i, ok := index[h]
		if !ok {
			if explicit {
				return nil, 0, nil, nil, &FileError{File: file, Line: 1, Err: ErrMissingColumn,
					Reason: fmt.Sprintf("%s: header has no column %q (mapped to %s)", ErrMissingColumn, h, name)}
			}
			continue
		}
		if !explicit && mappedElsewhere(spec.Columns, h) {
			continue // the header feeds another field on purpose
		}
		if dupHeader[h] {
			return nil, 0, nil, nil, &FileError{File: file, Line: 1, Column: i + 1, Err: ErrBadHeader,
				Reason: fmt.Sprintf("%s: column %q appears more than once", ErrBadHeader, h)}
		}
		used[i] = true
		mapped[name] = h
		if f == ID {
			idIdx = i
			continue
		}
		plans = append(plans, colPlan{index: i, field: f, factor: unitFactor(f, units[f]), header: h})
	}
	for _, f := range []Field{ID, RA, Dec} {
		if _, ok := mapped[Fields[f].Name]; !ok {
			return nil, 0, nil, nil, &FileError{File: file, Line: 1, Err: ErrMissingColumn,
				Reason: fmt.Sprintf("%s: header has no column for required field %s", ErrMissingColumn, Fields[f].Name)}
		}
	}
	sort.Slice(plans, func(a, b int) bool { return plans[a].index < plans[b].index })
	for i, h := range header {
		if !used[i] {
			unused = append(unused, h)
		}
	}
	return plans, idIdx, mapped, unused, nil
}

func mappedElsewhere(cols map[string]string, header string) bool {
	for _, h := range cols {
		if h == header {
			return true
		}
	}
	return false
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

// hashingReader reads a file in chunks on its own goroutine, hashing each
// chunk there, so hashing runs alongside parsing on a second core.
type hashingReader struct {
	full  chan chunk
	free  chan []byte
	done  chan struct{}
	cur   []byte
	buf   []byte
	err   error
	total [sha256.Size]byte
}

type chunk struct {
	b   []byte
	err error
}

const hashChunkBytes = 1 << 20

func newHashingReader(r io.Reader) *hashingReader {
	h := &hashingReader{full: make(chan chunk, 3), free: make(chan []byte, 4), done: make(chan struct{})}
	for range 4 {
		h.free <- make([]byte, hashChunkBytes)
	}
	go func() {
		sum := sha256.New()
		defer close(h.full)
		for {
			var b []byte
			select {
			case b = <-h.free:
			case <-h.done:
				return
			}
			n, err := io.ReadFull(r, b)
			sum.Write(b[:n])
			if err == io.ErrUnexpectedEOF {
				err = io.EOF
			}
			if err == io.EOF {
				copy(h.total[:], sum.Sum(nil))
			}
			select {
			case h.full <- chunk{b[:n], err}:
			case <-h.done:
				return
			}
			if err != nil {
				return
			}
		}
	}()
	return h
}

func (h *hashingReader) Read(p []byte) (int, error) {
	for len(h.cur) == 0 {
		if h.err != nil {
			return 0, h.err
		}
		if h.buf != nil {
			h.free <- h.buf[:cap(h.buf)]
			h.buf = nil
		}
		c, ok := <-h.full
		if !ok {
			h.err = io.EOF
			continue
		}
		h.buf, h.cur, h.err = c.b, c.b, c.err
	}
	n := copy(p, h.cur)
	h.cur = h.cur[n:]
	return n, nil
}

// sum is valid once Read has returned io.EOF.
func (h *hashingReader) sum() []byte { return h.total[:] }

func (h *hashingReader) close() {
	select {
	case <-h.done:
	default:
		close(h.done)
	}
}
