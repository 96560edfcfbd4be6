package ecsv_test

import (
	"context"
	"math"
	"path/filepath"
	"reflect"
	"testing"

	"starvet/catalog"
	"starvet/catalog/ingest"
)

// TestSameAsCSV reads one invented catalog written by astropy as CSV
// (same.csv) and as ECSV (space-, comma-delimited, gzipped) through
// ingest.Read: the tables must be identical but for the lines, which the
// ECSV header shifts by its length.
func TestSameAsCSV(t *testing.T) {
	dir := "../../testdata/ecsv"
	ctx := context.Background()
	ref, refRep, err := ingest.Read(ctx, catalog.Spec{Name: "same", File: filepath.Join(dir, "same.csv")}, catalog.ReadOptions{Strict: true})
	if err != nil {
		t.Fatal(err)
	}
	if ref.Len() != 8 {
		t.Fatalf("csv: %d rows", ref.Len())
	}
	// The ECSV header lines above the column-name line (the comma files
	// have one more: "# delimiter: ','").
	headerLines := map[string]int{"space.ecsv": 14, "comma.ecsv": 15, "space.ecsv.gz": 14, "null.ecsv": 15}
	for name, headerLines := range headerLines {
		tab, rep, err := ingest.Read(ctx, catalog.Spec{Name: "same", File: filepath.Join(dir, name)}, catalog.ReadOptions{Strict: true})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if !reflect.DeepEqual(tab.IDs, ref.IDs) {
			t.Fatalf("%s: ids %q, csv %q", name, tab.IDs, ref.IDs)
		}
		for i := range tab.Lines {
			if tab.Lines[i] != ref.Lines[i]+headerLines {
				t.Fatalf("%s: row %d at line %d, csv %d (+%d)", name, i, tab.Lines[i], ref.Lines[i], headerLines)
			}
		}
		for f := range tab.Cols {
			a, b := tab.Cols[f], ref.Cols[f]
			if (a == nil) != (b == nil) || len(a) != len(b) {
				t.Fatalf("%s: field %s present %v/%v", name, catalog.Fields[f].Name, a != nil, b != nil)
			}
			for i := range a {
				if math.Float64bits(a[i]) != math.Float64bits(b[i]) && !(math.IsNaN(a[i]) && math.IsNaN(b[i])) {
					t.Fatalf("%s: %s row %d = %v, csv %v", name, catalog.Fields[f].Name, i, a[i], b[i])
				}
			}
		}
		if !reflect.DeepEqual(rep.Mapped, refRep.Mapped) || !reflect.DeepEqual(rep.Unused, refRep.Unused) {
			t.Fatalf("%s: mapped %v unused %v, csv %v %v", name, rep.Mapped, rep.Unused, refRep.Mapped, refRep.Unused)
		}
	}
}
