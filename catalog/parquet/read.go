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

	"starvet/catalog"
	"starvet/internal/parallel"
	"starvet/internal/position"
)

// batchRows is how many rows a worker converts at a time.
const batchRows = 4096

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
		_, err := io.Copy(h, io.NewSectionReader(pf.f, 0, pf.size))
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
	fatal error
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
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(queue)
		sem := make(chan struct{}, workers)
		var start int64
		for gi, g := range groups {
			ch := make(chan *work, 2)
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
				pf.decodeGroup(p, gi, g, start, ch, stop)
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
}

// read reads up to n values, handing each run to use before the page
// that holds them is released; it returns how many it read.
func (c *colReader) read(n int, use func([]parquet.Value)) (int, error) {
	got, idle := 0, 0
	for got < n {
		if c.vals == nil {
			pg, err := c.pages.ReadPage()
			if err == io.EOF {
				return got, nil
			}
			if err != nil {
				return got, err
			}
			c.page, c.vals = pg, pg.Values()
		}
		k, err := c.vals.ReadValues(c.buf[:min(len(c.buf), n-got)])
		if k > 0 {
			use(c.buf[:k])
			got, idle = got+k, 0
		}
		if err == io.EOF {
			parquet.Release(c.page)
			c.page, c.vals = nil, nil
			continue
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
	if c.page != nil {
		parquet.Release(c.page)
	}
	if c.pages != nil {
		c.pages.Close()
	}
}

// decodeGroup converts row group gi, whose first row is file row start+1,
// in batches sent on ch.
func (pf *file) decodeGroup(p *plan, gi int, g parquet.RowGroup, start int64, ch chan<- *work, stop <-chan struct{}) {
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
			r := &colReader{pages: chunks[i].Pages(), buf: make([]parquet.Value, 1024)}
			readers = append(readers, r)
			return r
		}
		idr := open(p.id)
		nums := make([]*colReader, len(p.nums))
		for k, i := range p.nums {
			nums[k] = open(i)
		}
		l := p.layout
		vals := make([][]float64, len(p.nums))
		vals1 := make([]float64, len(p.nums))
		for done < rows {
			n := int(min(rows-done, batchRows))
			w := &work{raw: rawRows{pf: pf, p: p, g: g, gstart: start, off: done}}
			// the id column
			colName = pf.cols[p.id].Name
			ids := idColumn{unsigned: pf.leaves[p.id].unsigned}
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
				fc := floatColumn{v: vals[k][:0], lf: &pf.leaves[i]}
				got, err := nums[k].read(n, fc.add)
				if err != nil {
					return err
				}
				if got != n {
					return fmt.Errorf("%w: the column ends after %d of the row group's %d rows", errShort, done+int64(got), rows)
				}
				vals[k] = fc.v
			}
			colName = ""
			w.raw.ids, w.raw.vals = &ids, vals
			b := &w.out
			b.Begin(l, n)
			for r := range n {
				at := int(start+done) + r + 1
				if ids.null[r] {
					q := l.MissingID(at)
					q.Reason += fmt.Sprintf(" (row group %d)", gi+1)
					b.Reject(at, q)
					continue
				}
				for k := range vals {
					vals1[k] = vals[k][r]
				}
				if q := l.ConvertValues(vals1, b.Row(), at); q != nil {
					q.Reason += fmt.Sprintf(" (row group %d)", gi+1)
					b.Reject(at, q)
					continue
				}
				b.Add(at, ids.id(r))
			}
			b.End()
			vals = make([][]float64, len(p.nums)) // w keeps the old ones for its raw rows
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

// floatColumn collects a numeric column's values as float64, NaN for null.
type floatColumn struct {
	v  []float64
	lf *leaf
}

func (c *floatColumn) add(vs []parquet.Value) {
	for _, v := range vs {
		c.v = append(c.v, toFloat(v, c.lf.unsigned))
	}
}

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

func (c *idColumn) add(vs []parquet.Value) {
	if c.off == nil {
		c.off = append(make([]int32, 0, batchRows+1), 0)
	}
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
