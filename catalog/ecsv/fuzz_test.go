package ecsv

import (
	"context"
	"errors"
	"math"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// FuzzRead reads any input, alone or after a valid header: no panic, every
// error a *position.Error naming the file, every row read either kept or
// quarantined, every kept position finite and in range.
func FuzzRead(f *testing.F) {
	f.Add([]byte("id ra dec\na 1 2\n\"b c\" 3 \"\"\n"), true)
	f.Add([]byte("id,ra,dec\na,1,2\n"), false)
	f.Add([]byte("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: id, datatype: string}\n# - {name: ra, datatype: float64, unit: deg}\n# - {name: dec, datatype: float64, unit: deg}\nid ra dec\nx 1 2\n"), false)
	f.Fuzz(func(t *testing.T, body []byte, withHeader bool) {
		if withHeader {
			body = append([]byte("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: id, datatype: string}\n"+
				"# - {name: ra, unit: deg, datatype: float64}\n# - {name: dec, unit: deg, datatype: float64}\n"), body...)
		}
		p := writeTemp(t, string(body))
		tab, rep, err := Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{})
		if err != nil {
			var pe *position.Error
			if !errors.As(err, &pe) || pe.File != p {
				t.Fatalf("error %v (%T) does not name the file", err, err)
			}
			return
		}
		if rep.RowsRead != rep.RowsKept+len(rep.Quarantined) || tab.Len() != rep.RowsKept {
			t.Fatalf("read %d, kept %d (table %d), quarantined %d", rep.RowsRead, rep.RowsKept, tab.Len(), len(rep.Quarantined))
		}
		for i, ra := range tab.Col(catalog.RA) {
			if dec := tab.Col(catalog.Dec)[i]; math.IsNaN(ra) || ra < 0 || ra >= 360 || !(dec >= -90 && dec <= 90) {
				t.Fatalf("row %d kept with ra %v dec %v", i, ra, dec)
			}
		}
	})
}
