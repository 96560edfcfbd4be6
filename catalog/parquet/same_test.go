package parquetcat_test

import (
	"context"
	"math"
	"testing"

	"starvet/catalog"
	"starvet/catalog/ingest"
)

// same.csv and same.parquet are one invented catalog (make_fixtures.js:
// the CSV written by the script, the Parquet by DuckDB from that CSV):
// through ingest.Read they give the same table, every id and every column
// bit for bit, the empty cells and the nulls alike missing.
func TestSameCatalogAsCSVAndParquet(t *testing.T) {
	read := func(file string) (*catalog.Table, *catalog.Report) {
		tab, rep, err := ingest.Read(context.Background(), catalog.Spec{Name: "same", File: "../../testdata/parquet/" + file}, catalog.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		return tab, rep
	}
	c, crep := read("same.csv")
	p, prep := read("same.parquet")
	if c.Len() != 300 || p.Len() != 300 || crep.RowsRead != prep.RowsRead || len(prep.Quarantined) != 0 {
		t.Fatalf("csv %d rows, parquet %d rows (read %d and %d)", c.Len(), p.Len(), crep.RowsRead, prep.RowsRead)
	}
	missing := 0
	for i := range c.IDs {
		if c.IDs[i] != p.IDs[i] {
			t.Fatalf("row %d: ids %q and %q", i, c.IDs[i], p.IDs[i])
		}
		// The CSV's line is the Parquet's row plus the header line.
		if c.Lines[i] != p.Lines[i]+1 {
			t.Fatalf("row %d: line %d, row %d", i, c.Lines[i], p.Lines[i])
		}
	}
	for f := range c.Cols {
		cc, pc := c.Cols[f], p.Cols[f]
		if (cc == nil) != (pc == nil) || len(cc) != len(pc) {
			t.Fatalf("%s: %d and %d values", catalog.Fields[f].Name, len(cc), len(pc))
		}
		for i := range cc {
			if math.Float64bits(cc[i]) != math.Float64bits(pc[i]) {
				t.Fatalf("%s row %d: csv %v, parquet %v", catalog.Fields[f].Name, i, cc[i], pc[i])
			}
			if math.IsNaN(cc[i]) {
				missing++
			}
		}
	}
	// About a tenth of parallax and pm_dec cells are empty in the script.
	if missing < 20 || c.Cols[catalog.Parallax] == nil || c.Cols[catalog.FitResidual] == nil {
		t.Errorf("%d missing values; columns parallax %v fit_residual %v", missing, c.Cols[catalog.Parallax] != nil, c.Cols[catalog.FitResidual] != nil)
	}
}
