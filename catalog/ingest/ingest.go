// Package ingest is the one entry point for reading a catalog file,
// whatever its format: it picks the reader by the catalog's `format` key
// or the file name's ending (catalog.FormatOf) and returns the reader's
// catalog.Table (canonical units, see package catalog) and catalog.Report.
//
// Each format is a subpackage of catalog built on catalog.Builder: today
// catalog/csv (delimited text, optionally gzipped). A format starvet names
// but does not read yet is an error saying so, never a silent fallback to
// another reader. ingest exists because package catalog cannot choose: its
// readers import it.
package ingest

import (
	"context"
	"fmt"

	"starvet/catalog"
	csvcat "starvet/catalog/csv"
	parquetcat "starvet/catalog/parquet"
)

// Reader reads one file format.
type Reader interface {
	// Columns describes the file's columns as the file itself does (names,
	// and where the format carries them, datatypes, units and UCDs).
	Columns(ctx context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error)
	// Read ingests the file into canonical units. Errors are
	// *position.Error values wrapping the catalog sentinels.
	Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error)
}

// For returns the reader of spec's file.
func For(spec catalog.Spec) (Reader, error) {
	format, err := catalog.FormatOf(spec.File, spec.Format)
	if err != nil {
		return nil, catalog.WrapFileError(spec.File, 0, "", catalog.ErrFormat, err)
	}
	switch format {
	case catalog.FormatCSV:
		return csvReader{}, nil
	case catalog.FormatParquet:
		return parquetcat.Reader{}, nil
	}
	return nil, catalog.WrapFileError(spec.File, 0, "", catalog.ErrFormat,
		fmt.Errorf("format %s is not read by this build of starvet (it reads %s)", format, catalog.FormatCSV))
}

// Read ingests the catalog file spec.File into canonical units with the
// reader for its format.
func Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	r, err := For(spec)
	if err != nil {
		return nil, nil, err
	}
	return r.Read(ctx, spec, opt)
}

// Columns describes the columns of spec's file.
func Columns(ctx context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	r, err := For(spec)
	if err != nil {
		return nil, err
	}
	return r.Columns(ctx, spec)
}

type csvReader struct{}

func (csvReader) Columns(_ context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	return csvcat.Columns(spec)
}

func (csvReader) Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	return csvcat.Read(ctx, spec, opt)
}
