// Package ingest is the one entry point for reading a catalog file,
// whatever its format: it picks the reader and returns the reader's
// catalog.Table (canonical units, see package catalog) and catalog.Report.
//
// Every file is read as delimited text today (package catalog/csv: .csv,
// or .csv.gz decompressed by suffix; any other name is read as .csv). A
// reader for another format is one more subpackage of catalog built on
// catalog.Builder, chosen here by the file's suffix. ingest exists because
// package catalog cannot choose: its readers import it.
package ingest

import (
	"context"

	"starvet/catalog"
	csvcat "starvet/catalog/csv"
)

// Read ingests the catalog file spec.File into canonical units with the
// reader for its format. Errors are *position.Error values wrapping the
// catalog sentinels (catalog.ErrNoFile, ...); see csvcat.Read.
func Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	return csvcat.Read(ctx, spec, opt)
}
