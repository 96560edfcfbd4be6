package csvcat

import (
	"bytes"
	"context"
	"encoding/csv"
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

// Read ingests one delimited-text catalog file (.csv, or .csv.gz by
// suffix) into canonical units. File-level problems are returned as
// *position.Error; row problems quarantine the row (or, with opt.Strict,
// the first is returned as a *position.Error). The Report is returned,
// possibly partial, with every error except an unopenable file.
func Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	return read(ctx, spec, opt, false, nil)
}

// ReadText is Read for a text format that wraps delimited text in a header
// of its own (ECSV): p reads that header and describes the columns, and the
// data rows go through the same splitter and converters as a CSV file's.
// Lines are numbered from the file's first, the preamble's included.
func ReadText(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions, p *Preamble) (*catalog.Table, *catalog.Report, error) {
	return read(ctx, spec, opt, false, p)
}

// Preamble is the header a text format puts before its column-name line.
type Preamble struct {
	// Comment starts every line of the preamble: the lines from the first
	// that begin with it.
	Comment byte
	// Read is given the preamble's lines, without line ends (the first is
	// line 1), and returns the delimiter of the rest of the file (a
	// Spec.Delimiter value).
	Read func(lines [][]byte) (delimiter string, err error)
	// Columns describes the columns named by the column-name line, read at
	// line, or says why the names do not fit the preamble.
	Columns func(names []string, line int) ([]catalog.ColumnMeta, error)
}

// read is Read; forceCSV has encoding/csv split every record (for
// whitespace, the quote-aware splitter), the reference the tests hold the
// line splitter to.
func read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions, forceCSV bool, p *Preamble) (*catalog.Table, *catalog.Report, error) {
	name := spec.File
	rep := &catalog.Report{File: name}
	if err := spec.Check(); err != nil {
		return nil, rep, err
	}
	if _, err := separator(spec); err != nil {
		return nil, rep, err
	}
	in, err := open(name)
	if errors.Is(err, catalog.ErrNoFile) {
		return nil, nil, err
	}
	if err != nil {
		return nil, rep, err
	}
	defer in.Close()
	ls, err := start(spec, in, p)
	if err != nil {
		return nil, rep, err
	}
	if forceCSV {
		ls.handOver()
	}
	header, err := readHeader(name, ls)
	if err != nil {
		return nil, rep, err
	}
	rep.Header = header
	var bld *catalog.Builder
	if p == nil {
		if err := oneColumnHint(spec, header); err != nil {
			return nil, rep, err
		}
		bld, err = catalog.NewBuilder(spec, header, ls.headerLine, opt)
	} else {
		var meta []catalog.ColumnMeta
		if meta, err = p.Columns(header, ls.headerLine); err == nil {
			bld, _, err = catalog.NewBuilderFromMeta(spec, meta, false, opt)
			atLine(err, ls.headerLine)
		}
	}
	if err != nil {
		return nil, rep, err
	}
	if err := stream(ctx, ls, in, bld, parallel.Workers(opt.Workers)); err != nil {
		return nil, bld.Report(), err
	}
	sum, err := in.Finish()
	if err != nil {
		return nil, bld.Report(), err
	}
	t, rep := bld.Finish()
	rep.SHA256 = sum
	return t, rep, nil
}

func open(name string) (*catalog.Input, error) { return catalog.OpenInput(name, false) }

// readHeader reads the first record: the column names, a leading byte
// order mark dropped.
func readHeader(name string, ls *lineSplitter) ([]string, error) {
	header, err := ls.readHeader()
	if err != nil {
		sentinel := catalog.ErrBadHeader
		var pe *csv.ParseError
		if err == io.EOF && ls.line > 0 {
			err = fmt.Errorf("no column-name line after line %d", ls.line)
		} else if err == io.EOF {
			err = errors.New("file is empty")
		} else if !errors.As(err, &pe) {
			sentinel = catalog.ErrUnreadable
		}
		return nil, catalog.WrapFileError(name, ls.line+1, "cannot read header: ", sentinel, err)
	}
	header = append([]string(nil), header...)
	if len(header) > 0 {
		header[0] = strings.TrimPrefix(header[0], "\ufeff")
	}
	return header, nil
}

// presizeAfterRows is when the reader estimates the row count of a plain
// file from the bytes used so far and has the builder grow every column
// once, instead of doubling.
const presizeAfterRows = 4096

// stream runs the batch pipeline (see readBatches) and hands the batches
// to the builder in file order. The context is checked between batches.
func stream(ctx context.Context, ls *lineSplitter, in *catalog.Input, bld *catalog.Builder, workers int) error {
	conv := newConverter(bld.Layout(), ls.sep)
	batches, stop := readBatches(ls, in.Name, conv, workers)
	defer stop()
	presized := in.Gzipped()
	for b := range batches {
		<-b.parsed
		if err := ctx.Err(); err != nil {
			return err
		}
		if b.fatal != nil {
			return b.fatal
		}
		if err := bld.Add(&b.out, b); err != nil {
			return err
		}
		if !presized && bld.Len() >= presizeAfterRows && len(b.rows) > 0 {
			if used := b.rows[len(b.rows)-1].offset; used > 0 {
				bld.Reserve(int(float64(in.Size)/float64(used)*float64(bld.Len())*1.02) + 16)
			}
			presized = true
		}
		b.recycle()
	}
	return nil
}

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
	sep    byte     // the field separator of plain rows
	text   []byte   // plain rows' lines, back to back
	fields []string // the fields of the other rows
	rows   []rowRef
	out    catalog.Batch // the rows' canonical values
	fatal  error
	parsed chan struct{} // closed once convert is done with the batch
	free   chan *batch
}

func (b *batch) recycle() {
	b.text, b.fields, b.rows = b.text[:0], b.fields[:0], b.rows[:0]
	select {
	case b.free <- b:
	default:
	}
}

// record returns the fields of row r.
func (b *batch) record(r int) []string {
	br := &b.rows[r]
	if br.plain {
		return strings.Split(string(b.text[br.start:br.end]), string(b.sep))
	}
	return b.fields[br.start:br.end]
}

// Record is catalog.RawRows.Record: nil for a malformed row.
func (b *batch) Record(r int) []string {
	if b.rows[r].parseErr != nil {
		return nil
	}
	return b.record(r)
}

// FieldLine is catalog.RawRows.FieldLine.
func (b *batch) FieldLine(r, col int) int {
	lf := lineFields{start: b.rows[r].line, rec: b.record(r)}
	return lf.pos(col)
}

// readBatches runs the reader as a pipeline: one goroutine cuts the input
// into batches of records, workers goroutines convert their numbers
// (conv.convert, which only reads conv), and the caller takes the batches
// in file order, checks ids and appends to the table. stop must be called
// when the caller is done; it waits for every goroutine.
//
// parallel.Batches does not fit here: it needs the row count up front and
// hands out index ranges, while this input is a stream of unknown length
// whose batches exist only once the splitter has cut them, and must reach
// the caller in file order while later ones are still being converted.
func readBatches(ls *lineSplitter, name string, conv *converter, workers int) (<-chan *batch, func()) {
	work := make(chan *batch, workers)
	out := make(chan *batch, workers+2) // file order
	free := make(chan *batch, 2*workers+4)
	done := make(chan struct{})
	for range cap(free) {
		free <- &batch{sep: ls.sep, rows: make([]rowRef, 0, batchRows), free: free}
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
				conv.convert(b)
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

// converter turns the records of a batch into canonical numbers. It only
// reads its fields, so the workers share one.
type converter struct {
	l *catalog.Layout
	// roles[k] says what column k feeds (see newConverter); numericMarker
	// is set when a null marker reads as a number.
	roles         []int
	numericMarker bool
	sep           byte
}

// Column roles of a plain row, besides an index into Layout.Columns.
const (
	roleSkip = -1 // a column no field reads
	roleID   = -2
)

func newConverter(l *catalog.Layout, sep byte) *converter {
	c := &converter{l: l, roles: make([]int, len(l.Header)), sep: sep}
	for k := range c.roles {
		c.roles[k] = roleSkip
	}
	c.roles[l.IDIndex] = roleID
	for i, col := range l.Columns {
		c.roles[col.Index] = i
	}
	for _, m := range l.NullMarkers() {
		if _, ok := parseDecimal([]byte(m)); ok {
			c.numericMarker = true
		}
	}
	return c
}

// convert fills b.out: a quote-free line by the one-pass parsePlain, and
// any row it declines, or that came through encoding/csv, by the general
// catalog.Layout.ConvertRecord.
func (c *converter) convert(b *batch) {
	out := &b.out
	out.Begin(c.l, len(b.rows))
	row := out.Row()
	for r := range b.rows {
		br := &b.rows[r]
		if br.plain {
			if id, ok := c.parsePlain(b.text[br.start:br.end], row); ok {
				out.Add(br.line, id)
				continue
			}
			// Let the general code below find and word the problem.
			rec := strings.Split(string(b.text[br.start:br.end]), string(c.sep))
			br.start, br.plain = len(b.fields), false
			b.fields = append(b.fields, rec...)
			br.end = len(b.fields)
		}
		if pe := br.parseErr; pe != nil {
			out.Reject(br.line, malformed(pe))
			continue
		}
		lf := lineFields{start: br.line, rec: b.fields[br.start:br.end]}
		if q := c.l.ConvertRecord(lf.rec, row, lf.pos); q != nil {
			out.Reject(br.line, q)
			continue
		}
		out.Add(br.line, []byte(lf.rec[c.l.IDIndex]))
	}
	out.End()
}

// malformed is the quarantine of a record encoding/csv could not read.
func malformed(pe *csv.ParseError) *catalog.Quarantine {
	q := &catalog.Quarantine{Line: pe.StartLine, Column: 0, Reason: pe.Err.Error(), Err: catalog.ErrMalformed}
	if pe.Line != pe.StartLine {
		q.Reason += fmt.Sprintf(" (at line %d)", pe.Line)
	}
	return q
}

// parsePlain converts a quote-free line into row and returns its id cell,
// splitting and reading numbers in one pass. It reports false whenever the
// line is not plainly right (wrong field count, a missing id or position, a
// number strconv refuses, a value out of range), leaving the verdict and
// its wording to catalog.Layout.ConvertRecord.
func (c *converter) parsePlain(line []byte, row *[catalog.NumFields]float64) ([]byte, bool) {
	var id []byte
	l, cols, sep := c.l, c.l.Columns, c.sep
	pos, n := 0, len(line)
	last := len(c.roles) - 1
	for k, role := range c.roles {
		var end int
		if role >= 0 {
			v, e, ok := scanDecimal(line, pos)
			end = e
			if end < n && line[end] != sep {
				ok = false // more than a plain decimal: find the cell's end
				if j := bytes.IndexByte(line[end:], sep); j >= 0 {
					end += j
				} else {
					end = n
				}
			}
			p := &cols[role]
			cell := line[pos:end]
			if (!ok || c.numericMarker) && l.IsNullBytes(cell) {
				if p.Field == catalog.RA || p.Field == catalog.Dec {
					return nil, false
				}
				row[p.Field] = math.NaN()
			} else {
				if !ok {
					var err error
					if v, err = strconv.ParseFloat(string(cell), 64); err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
						return nil, false
					}
				}
				v *= p.Factor
				if catalog.CheckRange(p.Field, v) != "" {
					return nil, false
				}
				row[p.Field] = v
			}
		} else {
			end = n
			if j := bytes.IndexByte(line[pos:], sep); j >= 0 {
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
	if l.IsNullBytes(id) {
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

// Columns describes the file's columns as delimited text can: by the
// header's names, with no datatype, unit or UCD.
func Columns(spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	return ColumnsText(spec, nil)
}

// ColumnsText is Columns for a text format with a preamble: the columns as
// p describes them.
func ColumnsText(spec catalog.Spec, p *Preamble) ([]catalog.ColumnMeta, error) {
	if _, err := separator(spec); err != nil {
		return nil, err
	}
	in, err := open(spec.File)
	if err != nil {
		return nil, err
	}
	defer in.Close()
	ls, err := start(spec, in, p)
	if err != nil {
		return nil, err
	}
	header, err := readHeader(spec.File, ls)
	if err != nil {
		return nil, err
	}
	if p != nil {
		return p.Columns(header, ls.headerLine)
	}
	cols := make([]catalog.ColumnMeta, len(header))
	for i, h := range header {
		cols[i] = catalog.ColumnMeta{Name: h}
	}
	return cols, nil
}

// separator is the byte between fields that spec's delimiter names; ' '
// stands for runs of spaces and tabs. Without a delimiter a file named
// .tsv (or .tsv.gz) is tab-separated and any other comma-separated.
func separator(spec catalog.Spec) (byte, error) {
	switch spec.Delimiter {
	case "":
		if name := strings.ToLower(strings.TrimSuffix(strings.ToLower(spec.File), ".gz")); strings.HasSuffix(name, ".tsv") {
			return '\t', nil
		}
		return ',', nil
	case ",":
		return ',', nil
	case ";", "\t", " ":
		return spec.Delimiter[0], nil
	}
	msg := fmt.Sprintf("%s: delimiter %q: want \",\", \";\", \"\\t\" (tab) or \" \" (runs of whitespace)", catalog.ErrBadSpec, spec.Delimiter)
	return 0, &position.Error{File: spec.File, Name: "delimiter", Msg: msg, Err: catalog.ErrBadSpec}
}

// start makes the line splitter for spec's delimiter and, with a preamble,
// reads it and takes the delimiter it names.
func start(spec catalog.Spec, in *catalog.Input, p *Preamble) (*lineSplitter, error) {
	sep, _ := separator(spec)
	ls := newLineSplitter(in.Text)
	if p != nil {
		lines, err := ls.readPreamble(p.Comment)
		if err != nil {
			return nil, readError(in.Name, err)
		}
		d, err := p.Read(lines)
		if err != nil {
			return nil, err
		}
		if sep, err = separator(catalog.Spec{File: spec.File, Delimiter: d}); err != nil {
			return nil, err
		}
	}
	ls.setSep(sep)
	return ls, nil
}

// oneColumnHint is the error for a header of one name that holds another
// delimiter: the file is most likely separated by it.
func oneColumnHint(spec catalog.Spec, header []string) error {
	if len(header) != 1 {
		return nil
	}
	sep, _ := separator(spec)
	for _, d := range []string{",", ";", "\t", " "} {
		if d[0] == sep || !strings.Contains(header[0], d) {
			continue
		}
		msg := fmt.Sprintf("%s: header has one column %q; if the file is separated by %q set delimiter = %q in its [[catalog]]", catalog.ErrBadHeader, header[0], d, d)
		return &position.Error{File: spec.File, Line: 1, Col: 1, Name: header[0], Msg: msg, Err: catalog.ErrBadHeader}
	}
	return nil
}

// atLine puts line into a builder's error that names no line.
func atLine(err error, line int) {
	var pe *position.Error
	if errors.As(err, &pe) && pe.Line == 0 {
		pe.Line = line
	}
}
