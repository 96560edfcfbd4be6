package parquetcat

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"sync"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/encoding"

	"starvet/catalog"
	"starvet/internal/parallel"
	"starvet/internal/position"
)

// batchRows is how many rows a worker converts at a time.
const batchRows = 4096

// aheadBatches is how many converted batches of one row group may wait
// for the builder (at 16 columns, about 8 MB).
const aheadBatches = 16

// Read ingests one Parquet catalog file into canonical units. File-level
// problems are returned as *position.Error with no table; row problems
// quarantine the row (or, with opt.Strict, the first is returned). The
// Report is returned, possibly partial, with every error except an
// unopenable file.
func Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	name := spec.File
	rep := &catalog.Report{File: name}
	if err := spec.Check(); err != nil {
		return nil, rep, err
	}
	pf, err := open(name)
	if errors.Is(err, catalog.ErrNoFile) {
		return nil, nil, err
	}
	if err != nil {
		return nil, rep, err
	}
	defer pf.close()
	hashed := make(chan hashResult, 1)
	go func() {
		h := sha256.New()
		_, err := io.CopyBuffer(h, io.NewSectionReader(pf.f, 0, pf.size), make([]byte, 1<<20))
		hashed <- hashResult{hex.EncodeToString(h.Sum(nil)), err}
	}()
	bld, _, err := catalog.NewBuilderFromMeta(spec, pf.cols, true, opt)
	if err != nil {
		<-hashed
		return nil, rep, err
	}
	plan, err := pf.plan(bld.Layout())
	if err != nil {
		<-hashed
		return nil, bld.Report(), err
	}
	if n := pf.pf.NumRows(); n > 0 && n <= pf.size*8 {
		bld.Reserve(int(n))
	}
	err = pf.stream(ctx, plan, bld, parallel.Workers(opt.Workers))
	h := <-hashed
	if err != nil {
		return nil, bld.Report(), err
	}
	if h.err != nil {
		return nil, bld.Report(), catalog.WrapFileError(name, 0, "", catalog.ErrUnreadable, h.err)
	}
	t, rep := bld.Finish()
	rep.SHA256 = h.sum
	return t, rep, nil
}

type hashResult struct {
	sum string
	err error
}

// plan is what is read: the id column and the numeric columns in
// Layout.Columns order, as leaf indexes.
type plan struct {
	layout *catalog.Layout
	id     int
	nums   []int
}

func (pf *file) plan(l *catalog.Layout) (*plan, error) {
	p := &plan{layout: l, id: l.IDIndex}
	bad := func(i int, why string) error {
		return &position.Error{File: pf.name, Name: pf.cols[i].Name, What: fmt.Sprintf("column %q", pf.cols[i].Name),
			Msg: fmt.Sprintf("%s: %s", catalog.ErrBadHeader, why), Err: catalog.ErrBadHeader}
	}
	if why := pf.leaves[p.id].badID; why != "" {
		return nil, bad(p.id, why)
	}
	for _, c := range l.Columns {
		if why := pf.leaves[c.Index].bad; why != "" {
			return nil, bad(c.Index, why)
		}
		p.nums = append(p.nums, c.Index)
	}
	return p, nil
}

// work is one batch of rows converted by a worker.
type work struct {
	out   catalog.Batch
	raw   rawRows
	ids   idColumn
	vals  [][]float64 // the numeric columns of the batch, in plan order
	bad   []*catalog.Quarantine
	fatal error
}

// workPool recycles a read's batches once the builder has taken them. At
// most aheadBatches per group in flight, plus the builder's, are ever
// made, so their buffers are allocated once a read, not again after every
// garbage collection (as a sync.Pool would).
type workPool chan *work

func (wp workPool) get() *work {
	select {
	case w := <-wp:
		return w
	default:
		return new(work)
	}
}

func (wp workPool) put(w *work) {
	select {
	case wp <- w:
	default:
	}
}

// stream decodes the row groups on workers and hands their batches to the
// builder in file order.
func (pf *file) stream(ctx context.Context, p *plan, bld *catalog.Builder, workers int) error {
	groups := pf.pf.RowGroups()
	var total int64
	for _, g := range groups {
		total += g.NumRows()
	}
	if total != pf.pf.NumRows() {
		return catalog.WrapFileError(pf.name, 0, "", catalog.ErrUnreadable,
			fmt.Errorf("the footer says %d rows but its row groups hold %d", pf.pf.NumRows(), total))
	}
	stop := make(chan struct{})
	var wg sync.WaitGroup
	defer func() {
		close(stop)
		wg.Wait()
	}()
	queue := make(chan chan *work, workers)
	works := make(workPool, (workers+1)*aheadBatches+1)
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(queue)
		sem := make(chan struct{}, workers)
		var start int64
		for gi, g := range groups {
			// Room for a group's batches, up to aheadBatches, so that a
			// worker decodes the next group while the builder takes this one.
			ch := make(chan *work, min((g.NumRows()+batchRows-1)/batchRows, aheadBatches))
			select {
			case queue <- ch:
			case <-stop:
				return
			}
			select {
			case sem <- struct{}{}:
			case <-stop:
				return
			}
			wg.Add(1)
			go func(gi int, g parquet.RowGroup, start int64) {
				defer wg.Done()
				defer func() { <-sem }()
				defer close(ch)
				pf.decodeGroup(p, gi, g, start, ch, stop, works)
			}(gi, g, start)
			start += g.NumRows()
		}
	}()
	for ch := range queue {
		for w := range ch {
			if err := ctx.Err(); err != nil {
				return err
			}
			if w.fatal != nil {
				return w.fatal
			}
			err := bld.Add(&w.out, &w.raw)
			w.raw.close()
			w.raw = rawRows{}
			works.put(w)
			if err != nil {
				return err
			}
		}
	}
	return ctx.Err()
}

// colReader reads one column chunk's values across its pages.
type colReader struct {
	pages parquet.Pages
	page  parquet.Page
	vals  parquet.ValueReader
	buf   []parquet.Value
	// The typed path, for a page of numbers: its non-null values as
	// float64 and its definition levels (nil for a required column).
	typed      bool
	fv         []float64
	defs       []byte
	maxDef     byte
	rpos, vpos int // next row, next non-null value
	unsigned   bool
	scratch    []float64
	dict       parquet.Dictionary
	dictF      []float64
}

// next loads the next page; io.EOF when the chunk has no more.
func (c *colReader) next(numeric bool) error {
	pg, err := c.pages.ReadPage()
	if err != nil {
		return err
	}
	c.page, c.vals, c.typed = pg, nil, false
	if numeric {
		if fv, ok, err := c.floats(pg); err != nil {
			return err
		} else if ok {
			defs := pg.DefinitionLevels()
			if defs == nil && int64(len(fv)) != pg.NumRows() {
				return fmt.Errorf("page of %d rows holds %d values", pg.NumRows(), len(fv))
			}
			if defs != nil && countDefined(defs, c.maxDef) != len(fv) {
				return fmt.Errorf("page of %d non-null rows holds %d values", countDefined(defs, c.maxDef), len(fv))
			}
			c.typed, c.fv, c.defs, c.rpos, c.vpos = true, fv, defs, 0, 0
			return nil
		}
	}
	c.vals = pg.Values()
	return nil
}

func countDefined(defs []byte, maxDef byte) int {
	n := 0
	for _, d := range defs {
		if d == maxDef {
			n++
		}
	}
	return n
}

// floats is a page's non-null values as float64, when its type allows.
func (c *colReader) floats(pg parquet.Page) ([]float64, bool, error) {
	d := pg.Data()
	dict := pg.Dictionary()
	if dict == nil {
		fv, ok := toFloats(d, c.unsigned, c.scratch[:0])
		if ok && d.Kind() != encoding.Double {
			c.scratch = fv
		}
		return fv, ok, nil
	}
	if d.Kind() != encoding.Int32 {
		return nil, false, nil
	}
	if dict != c.dict {
		dd := dict.Page().Data()
		fv, ok := toFloats(dd, c.unsigned, c.dictF[:0])
		if !ok {
			return nil, false, nil
		}
		if dd.Kind() == encoding.Double {
			fv = append(c.dictF[:0], fv...) // the dictionary's own memory: keep a copy
		}
		c.dict, c.dictF = dict, fv
	}
	idx := d.Int32()
	out := c.scratch[:0]
	for _, i := range idx {
		if i < 0 || int(i) >= len(c.dictF) {
			return nil, false, fmt.Errorf("dictionary index %d out of %d values", i, len(c.dictF))
		}
		out = append(out, c.dictF[i])
	}
	c.scratch = out
	return out, true, nil
}

// toFloats converts typed values to float64, into dst unless they are
// already float64.
func toFloats(v encoding.Values, unsigned bool, dst []float64) ([]float64, bool) {
	switch v.Kind() {
	case encoding.Double:
		return v.Double(), true
	case encoding.Float:
		for _, x := range v.Float() {
			dst = append(dst, float64(x))
		}
	case encoding.Int32:
		if unsigned {
			for _, x := range v.Uint32() {
				dst = append(dst, float64(x))
			}
		} else {
			for _, x := range v.Int32() {
				dst = append(dst, float64(x))
			}
		}
	case encoding.Int64:
		if unsigned {
			for _, x := range v.Uint64() {
				dst = append(dst, float64(x))
			}
		} else {
			for _, x := range v.Int64() {
				dst = append(dst, float64(x))
			}
		}
	default:
		return nil, false
	}
	return dst, true
}

func (c *colReader) release() {
	if c.page != nil {
		parquet.Release(c.page)
	}
	c.page, c.vals, c.typed, c.fv, c.defs = nil, nil, false, nil, nil
}

// readFloats appends up to n values to dst as float64 (NaN for null).
func (c *colReader) readFloats(n int, dst []float64) ([]float64, int, error) {
	got := 0
	for got < n {
		if c.page == nil {
			if err := c.next(true); err == io.EOF {
				return dst, got, nil
			} else if err != nil {
				return dst, got, err
			}
		}
		if !c.typed {
			k, err := c.readValues(n-got, func(vs []parquet.Value) {
				for _, v := range vs {
					dst = append(dst, toFloat(v, c.unsigned))
				}
			})
			got += k
			if err != nil {
				return dst, got, err
			}
			continue
		}
		rows := len(c.fv)
		if c.defs != nil {
			rows = len(c.defs)
		}
		k := min(n-got, rows-c.rpos)
		if c.defs == nil {
			dst = append(dst, c.fv[c.vpos:c.vpos+k]...)
			c.vpos += k
		} else {
			for _, d := range c.defs[c.rpos : c.rpos+k] {
				if d == c.maxDef {
					dst = append(dst, c.fv[c.vpos])
					c.vpos++
				} else {
					dst = append(dst, math.NaN())
				}
			}
		}
		c.rpos += k
		got += k
		if c.rpos == rows {
			c.release()
		}
	}
	return dst, got, nil
}

// read reads up to n values, handing each run to use before the page
// that holds them is released; it returns how many it read.
func (c *colReader) read(n int, use func([]parquet.Value)) (int, error) {
	got := 0
	for got < n {
		if c.page == nil {
			if err := c.next(false); err == io.EOF {
				return got, nil
			} else if err != nil {
				return got, err
			}
		}
		k, err := c.readValues(n-got, use)
		got += k
		if err != nil {
			return got, err
		}
	}
	return got, nil
}

// readValues reads up to n values of the current page through the
// library's value reader, releasing the page at its end.
func (c *colReader) readValues(n int, use func([]parquet.Value)) (int, error) {
	got, idle := 0, 0
	for got < n && c.page != nil {
		k, err := c.vals.ReadValues(c.buf[:min(len(c.buf), n-got)])
		if k > 0 {
			use(c.buf[:k])
			got, idle = got+k, 0
		}
		if err == io.EOF {
			c.release()
			break
		}
		if err != nil {
			return got, err
		}
		if k == 0 {
			if idle++; idle > 2 {
				return got, errors.New("page yields no values")
			}
		}
	}
	return got, nil
}

func (c *colReader) close() {
	c.release()
	if c.pages != nil {
		c.pages.Close()
	}
}

// decodeGroup converts row group gi, whose first row is file row start+1,
// in batches sent on ch.
func (pf *file) decodeGroup(p *plan, gi int, g parquet.RowGroup, start int64, ch chan<- *work, stop <-chan struct{}, works workPool) {
	send := func(w *work) bool {
		select {
		case ch <- w:
			return true
		case <-stop:
			return false
		}
	}
	var readers []*colReader
	defer func() {
		for _, r := range readers {
			r.close()
		}
	}()
	rows := g.NumRows()
	var done int64
	var colName string
	fail := func(err error) {
		send(&work{fatal: &position.Error{File: pf.name, Row: start + done + 1, Name: colName, What: fmt.Sprintf("column %q", colName),
			Msg: fmt.Sprintf("%s: row group %d: %v", catalog.ErrUnreadable, gi+1, err), Err: fmt.Errorf("%w: %w", catalog.ErrUnreadable, err)}})
	}
	err := catch(func() error {
		chunks := g.ColumnChunks()
		if len(chunks) != len(pf.leaves) {
			return fmt.Errorf("%d column chunks for %d columns", len(chunks), len(pf.leaves))
		}
		open := func(i int) *colReader {
			lf := &pf.leaves[i]
			r := &colReader{pages: chunks[i].Pages(), buf: make([]parquet.Value, 1024), unsigned: lf.unsigned, maxDef: byte(lf.col.MaxDefinitionLevel())}
			readers = append(readers, r)
			return r
		}
		idr := open(p.id)
		nums := make([]*colReader, len(p.nums))
		for k, i := range p.nums {
			nums[k] = open(i)
		}
		l := p.layout
		for done < rows {
			n := int(min(rows-done, batchRows))
			w := works.get()
			w.raw = rawRows{pf: pf, p: p, g: g, gstart: start, off: done}
			if len(w.vals) != len(p.nums) {
				w.vals = make([][]float64, len(p.nums))
			}
			vals := w.vals
			// the id column
			colName = pf.cols[p.id].Name
			ids := &w.ids
			ids.reset(pf.leaves[p.id].unsigned)
			got, err := idr.read(n, ids.add)
			if err != nil {
				return err
			}
			if got != n {
				return fmt.Errorf("%w: the column ends after %d of the row group's %d rows", errShort, done+int64(got), rows)
			}
			for k, i := range p.nums {
				colName = pf.cols[i].Name
				if cap(vals[k]) < n {
					vals[k] = make([]float64, 0, batchRows)
				}
				v, got, err := nums[k].readFloats(n, vals[k][:0])
				if err != nil {
					return err
				}
				if got != n {
					return fmt.Errorf("%w: the column ends after %d of the row group's %d rows", errShort, done+int64(got), rows)
				}
				vals[k] = v
			}
			colName = ""
			w.raw.ids, w.raw.vals = ids, vals
			b := &w.out
			b.Begin(l, n)
			for k := range vals {
				copy(b.Vals[k], vals[k])
			}
			first := int(start+done) + 1
			bad := w.bad[:0]
			for r := range n {
				var q *catalog.Quarantine
				if ids.null[r] {
					q = l.MissingID(first + r)
				}
				bad = append(bad, q)
			}
			w.bad = bad
			l.ConvertColumns(b.Vals, n, first, bad)
			for r, q := range bad {
				if q != nil {
					q.Reason += fmt.Sprintf(" (row group %d)", gi+1)
					b.Reject(first+r, q)
					continue
				}
				b.AddConverted(first+r, ids.id(r))
			}
			b.End()
			if !send(w) {
				return nil
			}
			done += int64(n)
		}
		// A chunk that holds more values than its row group's rows is as
		// damaged as one that holds fewer.
		for k, r := range append([]*colReader{idr}, nums...) {
			colName = pf.cols[p.id].Name
			if k > 0 {
				colName = pf.cols[p.nums[k-1]].Name
			}
			if got, err := r.read(1, func([]parquet.Value) {}); err != nil || got > 0 {
				if err == nil {
					err = fmt.Errorf("the column holds more values than the row group's %d rows", rows)
				}
				return err
			}
		}
		return nil
	})
	if err != nil {
		fail(err)
	}
}

var errShort = errors.New("file truncated or corrupt")

func toFloat(v parquet.Value, unsigned bool) float64 {
	if v.IsNull() {
		return math.NaN()
	}
	switch v.Kind() {
	case parquet.Double:
		return v.Double()
	case parquet.Float:
		return float64(v.Float())
	case parquet.Int32:
		if unsigned {
			return float64(v.Uint32())
		}
		return float64(v.Int32())
	case parquet.Int64:
		if unsigned {
			return float64(v.Uint64())
		}
		return float64(v.Int64())
	case parquet.Boolean:
		if v.Boolean() {
			return 1
		}
		return 0
	}
	return math.NaN()
}

// idColumn collects the ids of a batch as text, back to back.
type idColumn struct {
	unsigned bool
	buf      []byte
	off      []int32
	null     []bool
}

func (c *idColumn) reset(unsigned bool) {
	c.unsigned, c.buf, c.off, c.null = unsigned, c.buf[:0], append(c.off[:0], 0), c.null[:0]
}

func (c *idColumn) add(vs []parquet.Value) {
	for _, v := range vs {
		c.null = append(c.null, v.IsNull())
		if !v.IsNull() {
			c.buf = appendText(c.buf, v, c.unsigned)
		}
		c.off = append(c.off, int32(len(c.buf)))
	}
}

func (c *idColumn) id(r int) []byte { return c.buf[c.off[r]:c.off[r+1]] }

// appendText appends a value as text: "" for null.
func appendText(b []byte, v parquet.Value, unsigned bool) []byte {
	if v.IsNull() {
		return b
	}
	switch v.Kind() {
	case parquet.ByteArray, parquet.FixedLenByteArray:
		return append(b, v.ByteArray()...)
	case parquet.Int32:
		if unsigned {
			return strconv.AppendUint(b, uint64(v.Uint32()), 10)
		}
		return strconv.AppendInt(b, int64(v.Int32()), 10)
	case parquet.Int64:
		if unsigned {
			return strconv.AppendUint(b, v.Uint64(), 10)
		}
		return strconv.AppendInt(b, v.Int64(), 10)
	case parquet.Float:
		return strconv.AppendFloat(b, float64(v.Float()), 'g', -1, 32)
	case parquet.Double:
		return strconv.AppendFloat(b, v.Double(), 'g', -1, 64)
	case parquet.Boolean:
		return strconv.AppendBool(b, v.Boolean())
	}
	return append(b, v.String()...)
}

// rawRows is catalog.RawRows for one batch: a set-aside row's fields are
// read again from the row group, all columns, as text.
type rawRows struct {
	pf     *file
	p      *plan
	g      parquet.RowGroup
	gstart int64 // file rows before the row group
	off    int64 // rows of the group before the batch
	ids    *idColumn
	vals   [][]float64
	rows   parquet.Rows
	at     int64 // the row of the group rows reads next
	buf    []parquet.Row
}

func (b *rawRows) FieldLine(r, _ int) int { return int(b.gstart+b.off) + r + 1 }

func (b *rawRows) Record(r int) []string {
	rec, err := b.record(r)
	if err == nil {
		return rec
	}
	// Reading the row again failed: give the decoded columns only.
	rec = make([]string, len(b.pf.cols))
	rec[b.p.id] = string(b.ids.id(r))
	for k, i := range b.p.nums {
		if v := b.vals[k][r]; !math.IsNaN(v) {
			rec[i] = strconv.FormatFloat(v, 'g', -1, 64)
		}
	}
	return rec
}

func (b *rawRows) record(r int) (rec []string, err error) {
	err = catch(func() error {
		target := b.off + int64(r)
		if b.rows == nil || target < b.at {
			if b.rows != nil {
				b.rows.Close()
			}
			b.rows, b.at = b.g.Rows(), 0
		}
		if target != b.at {
			if err := b.rows.SeekToRow(target); err != nil {
				return err
			}
		}
		if b.buf == nil {
			b.buf = make([]parquet.Row, 1)
		}
		n, err := b.rows.ReadRows(b.buf)
		if n != 1 {
			if err == nil {
				err = errors.New("no row")
			}
			return err
		}
		b.at = target + 1
		rec = make([]string, len(b.pf.cols))
		for _, v := range b.buf[0] {
			c := v.Column()
			if c < 0 || c >= len(rec) || !b.pf.leaves[c].flat {
				continue
			}
			rec[c] = string(appendText(nil, v, b.pf.leaves[c].unsigned))
		}
		return nil
	})
	return rec, err
}

func (b *rawRows) close() {
	if b.rows != nil {
		b.rows.Close()
		b.rows = nil
	}
}
