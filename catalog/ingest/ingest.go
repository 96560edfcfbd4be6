// Package ingest is the one entry point for reading a catalog file,
// whatever its format: it picks the reader by the catalog's `format` key
// or the file name's ending (catalog.FormatOf) and returns the reader's
// catalog.Table (canonical units, see package catalog) and catalog.Report.
//
// Each format is a subpackage of catalog built on catalog.Builder:
// catalog/csv (delimited text, optionally gzipped), catalog/ecsv,
// catalog/fits (binary tables), catalog/votable and catalog/parquet.
// catalog/shard reads starvet's own shards: rows of a table ingested
// before, already canonical, so it needs no Builder. A format starvet names
// but does not read is an error saying so, never a silent fallback to
// another reader. ingest exists because package catalog cannot choose: its
// readers import it.
package ingest

import (
	"context"
	"fmt"
	"strings"

	"starvet/catalog"
	csvcat "starvet/catalog/csv"
	"starvet/catalog/ecsv"
	fitscat "starvet/catalog/fits"
	parquetcat "starvet/catalog/parquet"
	"starvet/catalog/shard"
	"starvet/catalog/votable"
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

// readers maps each format to its reader; a format missing here is named
// by catalog.FormatOf but not read by this build.
var readers = map[string]Reader{
	catalog.FormatCSV:     csvReader{},
	catalog.FormatECSV:    ecsv.Reader{},
	catalog.FormatFITS:    fitscat.Reader{},
	catalog.FormatVOTable: votable.Reader{},
	catalog.FormatParquet: parquetcat.Reader{},
	catalog.FormatShard:   shard.Reader{},
}

// For returns the reader of spec's file.
func For(spec catalog.Spec) (Reader, error) {
	format, err := catalog.FormatOf(spec.File, spec.Format)
	if err != nil {
		return nil, catalog.WrapFileError(spec.File, 0, "", catalog.ErrFormat, err)
	}
	if r, ok := readers[format]; ok {
		return r, nil
	}
	var reads []string
	for _, f := range catalog.FormatNames() {
		if _, ok := readers[f]; ok {
			reads = append(reads, f)
		}
	}
	return nil, catalog.WrapFileError(spec.File, 0, "", catalog.ErrFormat,
		fmt.Errorf("format %s is not read by this build of starvet (it reads %s)", format, strings.Join(reads, ", ")))
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
