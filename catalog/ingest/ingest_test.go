package ingest

import (
	"context"
	"errors"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// Read hands plain and gzipped delimited text to the CSV reader and
// returns its table and report unchanged; a missing file is an error
// naming it.
func TestReadChoosesTheReader(t *testing.T) {
	for _, file := range []string{"../../testdata/ingest/auto.csv", "../../testdata/ingest/auto.csv.gz"} {
		tab, rep, err := Read(context.Background(), catalog.Spec{Name: "lark", File: file}, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("%s: %v", file, err)
		}
		// auto.csv: two rows kept, the first with parallax 0.8 mas (its own text).
		if rep.RowsKept != 2 || tab.Cols[catalog.Parallax][0] != 0.8 || rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
			t.Errorf("%s: kept %d of %d, parallax %v", file, rep.RowsKept, rep.RowsRead, tab.Cols[catalog.Parallax])
		}
	}
	_, _, err := Read(context.Background(), catalog.Spec{Name: "lark", File: "no-such-file.csv"}, catalog.ReadOptions{})
	var pe *position.Error
	if !errors.Is(err, catalog.ErrNoFile) || !errors.As(err, &pe) || pe.File != "no-such-file.csv" {
		t.Errorf("missing file: %v", err)
	}
}
