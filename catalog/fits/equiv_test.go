package fitscat_test

import (
	"context"
	"math"
	"testing"

	"starvet/catalog"
	"starvet/catalog/ingest"
)

// The same invented catalog as CSV and as FITS (testdata/fits/equiv.*,
// both written by make_fixtures.py from one list of decimal strings; the
// FITS parallax is found by its UCD under another name) gives the same
// table through ingest.Read: ids, and every column bit for bit, empty CSV
// cells and FITS NaNs both missing. Table.Lines differ by design: CSV
// lines count the header, FITS rows do not.
func TestCSVAndFITSAgree(t *testing.T) {
	const dir = "../../testdata/fits/"
	csvTab, csvRep, err := ingest.Read(context.Background(), catalog.Spec{Name: "equiv", File: dir + "equiv.csv"}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	fitsTab, fitsRep, err := ingest.Read(context.Background(), catalog.Spec{Name: "equiv", File: dir + "equiv.fits"}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fitsRep.MappedBy["parallax"] != catalog.ByUCD || fitsRep.Mapped["parallax"] != "plx" {
		t.Errorf("parallax mapped from %q by %q", fitsRep.Mapped["parallax"], fitsRep.MappedBy["parallax"])
	}
	if csvTab.Len() != 4 || fitsTab.Len() != csvTab.Len() || csvRep.RowsKept != fitsRep.RowsKept {
		t.Fatalf("csv %d rows, fits %d", csvTab.Len(), fitsTab.Len())
	}
	for i := range csvTab.IDs {
		if csvTab.IDs[i] != fitsTab.IDs[i] {
			t.Errorf("row %d: id %q vs %q", i+1, csvTab.IDs[i], fitsTab.IDs[i])
		}
	}
	nan := 0
	for f := catalog.Field(0); f < catalog.NumFields; f++ {
		a, b := csvTab.Cols[f], fitsTab.Cols[f]
		if (a == nil) != (b == nil) || len(a) != len(b) {
			t.Errorf("%s: csv %v, fits %v", catalog.Fields[f].Name, a, b)
			continue
		}
		for i := range a {
			if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
				t.Errorf("%s row %d: csv %v (%016x), fits %v (%016x)", catalog.Fields[f].Name, i+1, a[i], math.Float64bits(a[i]), b[i], math.Float64bits(b[i]))
			}
			if math.IsNaN(a[i]) {
				nan++
			}
		}
	}
	if nan != 2 {
		t.Errorf("%d missing cells, the fixture has 2", nan)
	}
}
