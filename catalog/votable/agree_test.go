package votable_test

import (
	"context"
	"math"
	"testing"

	"starvet/catalog"
	"starvet/catalog/ingest"
)

// lark.csv and lark_binary2.vot are the same invented rows, written by
// make_fixtures.py (the VOTable by astropy, the CSV with Python's
// shortest round-trip repr of the same doubles). Through ingest.Read they
// give the same ids and bit-identical columns. Table.Lines differ by
// design (text lines versus table rows), as does EpochJyr (the VOTable's
// COOSYS gives one).
func TestCSVAndBinary2Agree(t *testing.T) {
	read := func(file string) (*catalog.Table, *catalog.Report) {
		tab, rep, err := ingest.Read(context.Background(), catalog.Spec{Name: "lark", File: "../../testdata/votable/" + file}, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("%s: %v", file, err)
		}
		return tab, rep
	}
	ct, cr := read("lark.csv")
	vt, vr := read("lark_binary2.vot")
	if ct.Len() != 5 || vt.Len() != ct.Len() || cr.RowsRead != vr.RowsRead || len(cr.Quarantined) != len(vr.Quarantined) {
		t.Fatalf("csv kept %d of %d, votable %d of %d", ct.Len(), cr.RowsRead, vt.Len(), vr.RowsRead)
	}
	for i := range ct.IDs {
		if ct.IDs[i] != vt.IDs[i] {
			t.Errorf("row %d: id %q vs %q", i, ct.IDs[i], vt.IDs[i])
		}
	}
	for f := catalog.Field(0); f < catalog.NumFields; f++ {
		c, v := ct.Cols[f], vt.Cols[f]
		if (c == nil) != (v == nil) || len(c) != len(v) {
			t.Errorf("%s: csv %v, votable %v", catalog.Fields[f].Name, c, v)
			continue
		}
		for i := range c {
			if math.Float64bits(c[i]) != math.Float64bits(v[i]) {
				t.Errorf("%s row %d: csv %v (%#x), votable %v (%#x)", catalog.Fields[f].Name, i, c[i], math.Float64bits(c[i]), v[i], math.Float64bits(v[i]))
			}
		}
	}
}
