package parquetcat

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// FuzzRead feeds arbitrary bytes to Read: it must not panic, and it either
// returns a whole table whose counts add up or an error with no table.
// The seeds are the DuckDB fixtures and the committed corpus in
// testdata/fuzz/FuzzRead.
func FuzzRead(f *testing.F) {
	seeds, err := filepath.Glob(dir + "*.parquet")
	if err != nil || len(seeds) == 0 {
		f.Fatalf("no seeds: %v", err)
	}
	for _, s := range seeds {
		b, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(t.TempDir(), "f.parquet")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		spec := catalog.Spec{Name: "fuzz", File: p}
		if _, err := Columns(spec); err != nil {
			var pe *position.Error
			if !errors.As(err, &pe) {
				t.Fatalf("Columns: error %T %v is not a *position.Error", err, err)
			}
		}
		tab, rep, err := Read(context.Background(), spec, catalog.ReadOptions{Workers: 2})
		if err != nil {
			var pe *position.Error
			if tab != nil || !errors.As(err, &pe) {
				t.Fatalf("error %v with a table %v, or not a *position.Error (%T)", err, tab != nil, err)
			}
			return
		}
		if tab.Len() != rep.RowsKept || rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
			t.Fatalf("kept %d (table %d) + quarantined %d != read %d", rep.RowsKept, tab.Len(), len(rep.Quarantined), rep.RowsRead)
		}
	})
}
