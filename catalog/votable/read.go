package votable

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"

	"starvet/catalog"
	"starvet/internal/position"
)

// Sentinels of this reader, wrapped (beside a catalog sentinel) in the
// *position.Error values it returns.
var (
	// ErrMalformed marks a document that is not well-formed XML or ends
	// early (wrapped with catalog.ErrUnreadable).
	ErrMalformed = errors.New("malformed VOTable")
	// ErrTruncated marks a binary stream that ends inside a row, or data
	// holding fewer or more rows than the TABLE's nrows (wrapped with
	// catalog.ErrUnreadable).
	ErrTruncated = errors.New("truncated VOTable data")
	// ErrNoTable marks a Spec.Table the document does not have (wrapped
	// with catalog.ErrBadSpec).
	ErrNoTable = errors.New("no such VOTable TABLE")
	// ErrDatatype marks a mapped column whose datatype or arraysize cannot
	// feed its field (wrapped with catalog.ErrBadHeader).
	ErrDatatype = errors.New("unusable VOTable column")
	// ErrOverflow marks a document whose INFO QUERY_STATUS is OVERFLOW:
	// the service that wrote it stopped at a row limit, so the table is
	// the first rows of a larger result. Read returns the table and report
	// it read together with this error.
	// ErrEpochConflict marks a file whose COOSYS epoch differs from the
	// campaign's epoch for the catalog.
	ErrEpochConflict = errors.New("epoch of the file and of the campaign differ")
	ErrOverflow      = errors.New("VOTable query result is truncated (QUERY_STATUS OVERFLOW)")
	// ErrQueryFailed marks a document whose INFO QUERY_STATUS is ERROR.
	ErrQueryFailed = errors.New("VOTable query failed (QUERY_STATUS ERROR)")
)

// Info is what a VOTable says about its table beyond the columns.
type Info struct {
	Table         string  // the TABLE read: its name, else ID, else "#n"
	Serialization string  // "TABLEDATA", "BINARY", "BINARY2" or "" (no DATA)
	Epoch         string  // the COOSYS epoch as written ("J2015.5"), "" when none
	EpochJyr      float64 // Epoch as a Julian year, 0 when none or Besselian
	QueryStatus   string  // INFO QUERY_STATUS value ("OK", "OVERFLOW", "ERROR"), "" when none
	QueryMessage  string  // that INFO's text
}

// Reader is the VOTable reader for catalog/ingest.
type Reader struct{}

// Columns is Columns.
func (Reader) Columns(_ context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	return Columns(spec)
}

// Read is Read.
func (Reader) Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	return Read(ctx, spec, opt)
}

// Columns describes the FIELDs of the table Spec.Table selects.
func Columns(spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	in, err := open(spec.File)
	if err != nil {
		return nil, err
	}
	defer in.Close()
	sc := newScanner(in.Text, spec.Table)
	if _, err := sc.head(); err != nil {
		return nil, sc.fileError(spec.File, err)
	}
	return sc.meta(), nil
}

// Read ingests the selected table into canonical units (see ReadTable).
func Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	t, rep, _, err := ReadTable(ctx, spec, opt)
	return t, rep, err
}

// ReadTable ingests the table Spec.Table selects and says what the
// document says about it. File and row problems are as for
// catalog/csv, as *position.Error values naming the file, the table, the
// 1-based row and the column. When the document's QUERY_STATUS is
// OVERFLOW the table is read and the report carries a warning that names
// ErrOverflow (the result is only the first part of a larger one); an
// ERROR status and every other error return no table.
func ReadTable(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, Info, error) {
	var info Info
	rep := &catalog.Report{File: spec.File}
	if err := spec.Check(); err != nil {
		return nil, rep, info, err
	}
	in, err := open(spec.File)
	if err != nil {
		return nil, nil, info, err
	}
	defer in.Close()
	sc := newScanner(in.Text, spec.Table)
	ser, err := sc.head()
	info.Table = sc.label
	if err != nil {
		return nil, rep, info, sc.fileError(spec.File, err)
	}
	info.Serialization = [...]string{"", "TABLEDATA", "BINARY", "BINARY2"}[ser]
	cols := sc.meta()
	rep.Header = make([]string, len(cols))
	for i, c := range cols {
		rep.Header[i] = c.Name
	}
	bld, m, err := catalog.NewBuilderFromMeta(spec, cols, true, opt)
	if err != nil {
		return nil, rep, info, sc.inTable(err)
	}
	rd, err := newRowDecoder(sc, bld.Layout(), spec.File, ser)
	if err != nil {
		return nil, bld.Report(), info, err
	}
	if !in.Gzipped() {
		rd.size = in.Size
	}
	info.Epoch = sc.epoch(m.Column[catalog.RA])
	info.EpochJyr, _ = julianYear(info.Epoch)
	if spec.EpochJyr != 0 && info.EpochJyr != 0 && math.Abs(spec.EpochJyr-info.EpochJyr) > epochToleranceJyr {
		return nil, bld.Report(), info, &position.Error{File: spec.File, What: fmt.Sprintf("table %q", sc.label), Err: ErrEpochConflict,
			Msg: fmt.Sprintf("%v: the campaign says epoch %v, the file's COOSYS says %s; fix one of them", ErrEpochConflict, spec.EpochJyr, info.Epoch)}
	}
	if err := rd.run(ctx, bld); err != nil {
		return nil, bld.Report(), info, sc.inTable(err)
	}
	if err := sc.tail(); err != nil {
		return nil, bld.Report(), info, sc.fileError(spec.File, err)
	}
	sum, err := in.Finish()
	if err != nil {
		return nil, bld.Report(), info, err
	}
	t, rep := bld.Finish()
	rep.SHA256 = sum
	if t.EpochJyr == 0 {
		t.EpochJyr = info.EpochJyr
	}

	info.QueryStatus, info.QueryMessage = sc.status, sc.message
	switch strings.ToUpper(strings.TrimSpace(sc.status)) {
	case "OVERFLOW":
		w := &position.Error{File: spec.File, What: fmt.Sprintf("table %q", sc.label), Err: ErrOverflow,
			Msg: fmt.Sprintf("%v: the service stopped at a row limit, so these %d rows are the first of a larger result; query again in smaller pieces (%s)", ErrOverflow, rep.RowsRead, sc.message)}
		rep.Warnings = append(rep.Warnings, w.Error())
		return t, rep, info, nil
	case "ERROR":
		return nil, rep, info, &position.Error{File: spec.File, What: fmt.Sprintf("table %q", sc.label), Err: ErrQueryFailed,
			Msg: fmt.Sprintf("%v: %s", ErrQueryFailed, sc.message)}
	}
	return t, rep, info, nil
}

// meta is the selected table's FIELDs as catalog.ColumnMeta.
func (s *scanner) meta() []catalog.ColumnMeta {
	cols := make([]catalog.ColumnMeta, len(s.fields))
	for i, f := range s.fields {
		cols[i] = catalog.ColumnMeta{Name: f.name, Datatype: f.datatype, Unit: f.unit, UCD: f.ucd}
	}
	return cols
}

// fileError words a document-level problem met while scanning.
func (s *scanner) fileError(file string, err error) error {
	var pe *position.Error
	if errors.As(err, &pe) {
		return s.inTable(pe)
	}
	e := &position.Error{File: file, Msg: err.Error()}
	switch {
	case errors.Is(err, errSyntax), errors.Is(err, errStreamEOF):
		e.Err = fmt.Errorf("%w: %w: %w", catalog.ErrUnreadable, ErrMalformed, err)
	case errors.Is(err, ErrNoTable):
		e.Err = fmt.Errorf("%w: %w", catalog.ErrBadSpec, err)
	default:
		e.Err = fmt.Errorf("%w: %w", catalog.ErrUnreadable, err)
	}
	return s.inTable(e)
}

// inTable adds the table's name to a *position.Error's What.
func (s *scanner) inTable(err error) error {
	var pe *position.Error
	if s.label == "" || !errors.As(err, &pe) || strings.HasPrefix(pe.What, "table ") {
		return err
	}
	t := fmt.Sprintf("table %q", s.label)
	if pe.What != "" {
		t += " " + pe.What
	} else if pe.Name != "" {
		t += fmt.Sprintf(" column %q", pe.Name)
	}
	pe.What = t
	return err
}

func open(name string) (*catalog.Input, error) { return catalog.OpenInput(name, false) }

// epochToleranceJyr is how far a campaign's epoch may differ from the
// file's and still agree: well below a day, since both are written to a
// few decimals of a year (common practice).
const epochToleranceJyr = 1e-3
