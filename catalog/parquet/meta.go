package parquetcat

import (
	"context"
	"errors"
	"fmt"
	"os"
	"strings"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/deprecated"
	"github.com/parquet-go/parquet-go/format"
	"go.yaml.in/yaml/v3"

	"starvet/catalog"
	"starvet/internal/position"
)

// MetaKey is the key-value metadata entry read for units and UCDs.
const MetaKey = "table_meta_yaml"

// Reader is the Parquet reader behind ingest.Reader.
type Reader struct{}

// Columns is the package function Columns.
func (Reader) Columns(_ context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	return Columns(spec)
}

// Read is the package function Read.
func (Reader) Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	return Read(ctx, spec, opt)
}

// Columns describes the columns of spec.File as the file does.
func Columns(spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	pf, err := open(spec.File)
	if err != nil {
		return nil, err
	}
	defer pf.close()
	return pf.cols, nil
}

// leaf is one leaf column of the file.
type leaf struct {
	col      *parquet.Column
	kind     parquet.Kind
	unsigned bool
	flat     bool   // a top-level, non-repeated column: one value per row
	bad      string // why it cannot feed a number, "" when it can
	badID    string // why it cannot be an id, "" when it can
}

// file is an opened Parquet file.
type file struct {
	name   string
	f      *os.File
	size   int64
	pf     *parquet.File
	leaves []leaf
	cols   []catalog.ColumnMeta
}

func open(name string) (pf *file, err error) {
	f, err := os.Open(name)
	if err != nil {
		return nil, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, catalog.WrapFileError(name, 0, "", catalog.ErrNoFile, err)
	}
	defer func() {
		if err != nil {
			f.Close()
		}
	}()
	var p *parquet.File
	err = catch(func() error {
		var err error
		p, err = parquet.OpenFile(f, st.Size(), parquet.SkipPageIndex(true), parquet.SkipBloomFilters(true))
		return err
	})
	if err != nil {
		return nil, catalog.WrapFileError(name, 0, "not a readable Parquet file (truncated, or its footer is broken): ", catalog.ErrUnreadable, err)
	}
	pf = &file{name: name, f: f, size: st.Size(), pf: p}
	if err := catch(pf.describe); err != nil {
		var pe *position.Error
		if !errors.As(err, &pe) {
			err = catalog.WrapFileError(name, 0, "unreadable schema: ", catalog.ErrUnreadable, err)
		}
		return nil, err
	}
	return pf, nil
}

func (pf *file) close() { pf.f.Close() }

// describe lists the leaf columns with their types, units and UCDs.
func (pf *file) describe() error {
	var walk func(c *parquet.Column, depth int, repeated bool)
	walk = func(c *parquet.Column, depth int, repeated bool) {
		repeated = repeated || c.Repeated()
		if !c.Leaf() {
			for _, k := range c.Columns() {
				walk(k, depth+1, repeated)
			}
			return
		}
		pf.leaves = append(pf.leaves, describeLeaf(c, depth == 1 && !repeated))
	}
	for _, c := range pf.pf.Root().Columns() {
		walk(c, 1, false)
	}
	for i, l := range pf.leaves {
		if l.col.Index() != i {
			return catalog.WrapFileError(pf.name, 0, "", catalog.ErrUnreadable,
				fmt.Errorf("leaf column %q has index %d, expected %d", strings.Join(l.col.Path(), "."), l.col.Index(), i))
		}
	}
	units, err := pf.units()
	if err != nil {
		return err
	}
	for _, l := range pf.leaves {
		name := strings.Join(l.col.Path(), ".")
		u := units[name]
		pf.cols = append(pf.cols, catalog.ColumnMeta{Name: name, Datatype: datatype(l.col.Type()), Unit: u.unit, UCD: u.ucd})
	}
	return nil
}

func describeLeaf(c *parquet.Column, flat bool) leaf {
	t := c.Type()
	l := leaf{col: c, kind: t.Kind(), flat: flat}
	lt := t.LogicalType()
	if it := integerType(lt); it != nil {
		l.unsigned = !it.IsSigned
	}
	if ct := t.ConvertedType(); ct != nil {
		switch *ct {
		case deprecated.Uint8, deprecated.Uint16, deprecated.Uint32, deprecated.Uint64:
			l.unsigned = true
		}
	}
	other := lt != nil && lt.Value != nil && integerType(lt) == nil // decimal, date, time, timestamp, string...
	switch {
	case !flat:
		l.bad = "a column inside a group or a repeated column cannot feed a field"
		l.badID = l.bad
		return l
	case l.kind == parquet.ByteArray:
		l.bad = "text cannot feed a numeric field"
	case other || (l.kind != parquet.Boolean && l.kind != parquet.Int32 && l.kind != parquet.Int64 && l.kind != parquet.Float && l.kind != parquet.Double):
		l.bad = "type " + datatype(t) + " cannot feed a numeric field (want BOOLEAN, INT32, INT64, FLOAT or DOUBLE)"
	}
	switch {
	case l.kind == parquet.ByteArray:
	case (l.kind == parquet.Int32 || l.kind == parquet.Int64) && !other:
	default:
		l.badID = "type " + datatype(t) + " cannot be an id (want BYTE_ARRAY text, INT32 or INT64)"
	}
	return l
}

func integerType(lt *format.LogicalType) *format.IntType {
	if lt == nil {
		return nil
	}
	it, _ := lt.Value.(*format.IntType)
	return it
}

// datatype is the physical type, then the logical one when there is one.
func datatype(t parquet.Type) string {
	s := t.Kind().String()
	if lt := t.LogicalType(); lt != nil && lt.Value != nil {
		s += "/" + lt.String()
	} else if ct := t.ConvertedType(); ct != nil {
		s += "/" + fmt.Sprint(*ct)
	}
	return s
}

type unitUCD struct{ unit, ucd string }

// tableMeta is the part of an ECSV-style YAML header that is read.
type tableMeta struct {
	Datatype []struct {
		Name string         `yaml:"name"`
		Unit string         `yaml:"unit"`
		UCD  string         `yaml:"ucd"`
		Meta map[string]any `yaml:"meta"`
	} `yaml:"datatype"`
}

// units reads the units and UCDs of MetaKey, by column name.
func (pf *file) units() (map[string]unitUCD, error) {
	text, ok := pf.pf.Lookup(MetaKey)
	if !ok {
		return nil, nil
	}
	var m tableMeta
	if err := yaml.Unmarshal([]byte(text), &m); err != nil {
		return nil, catalog.WrapFileError(pf.name, 0, "key-value metadata "+MetaKey+" is not the YAML of a table header: ", catalog.ErrBadHeader, err)
	}
	out := make(map[string]unitUCD, len(m.Datatype))
	for _, d := range m.Datatype {
		u := unitUCD{unit: d.Unit, ucd: d.UCD}
		if s, ok := d.Meta["ucd"].(string); ok && u.ucd == "" {
			u.ucd = s
		}
		out[d.Name] = u
	}
	return out, nil
}

// errPanic marks a panic of the Parquet library on a corrupt file.
var errPanic = errors.New("parquet library panicked")

// catch runs f and turns a panic into an error.
func catch(f func() error) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("%w: %v", errPanic, r)
		}
	}()
	return f()
}
