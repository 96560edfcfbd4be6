package shard_test

import (
	"context"
	"fmt"
	"path/filepath"
	"testing"

	"starvet/catalog"
	"starvet/catalog/ingest"
	"starvet/catalog/shard"
)

// ingest picks the shard reader by the ".shard" ending and returns its
// table.
func TestShardIngestBySuffix(t *testing.T) {
	src := &catalog.Table{Name: "delta-survey", Role: catalog.Spectroscopy}
	for i := range 30 {
		src.IDs = append(src.IDs, fmt.Sprintf("dl-%03d", i))
		src.Lines = append(src.Lines, i+2)
		src.Cols[catalog.RA] = append(src.Cols[catalog.RA], float64(i))
		src.Cols[catalog.Dec] = append(src.Cols[catalog.Dec], -float64(i))
		src.Cols[catalog.Parallax] = append(src.Cols[catalog.Parallax], 0.5+float64(i)/7)
	}
	path := filepath.Join(t.TempDir(), "delta.shard")
	if err := shard.Write(path, src, []int32{2, 5, 29}); err != nil {
		t.Fatal(err)
	}
	r, err := ingest.For(catalog.Spec{File: path})
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := r.(shard.Reader); !ok {
		t.Fatalf("ingest picks %T for %s", r, path)
	}
	got, _, err := ingest.Read(context.Background(), catalog.Spec{Name: "delta", File: path}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range []int{2, 5, 29} {
		if got.IDs[i] != src.IDs[r] || got.Lines[i] != src.Lines[r] || got.Cols[catalog.Parallax][i] != src.Cols[catalog.Parallax][r] {
			t.Errorf("row %d: %q line %d parallax %v, want %q line %d parallax %v", i, got.IDs[i], got.Lines[i], got.Cols[catalog.Parallax][i],
				src.IDs[r], src.Lines[r], src.Cols[catalog.Parallax][r])
		}
	}
	if f, err := catalog.FormatOf("x/TILE.SHARD", ""); err != nil || f != catalog.FormatShard {
		t.Errorf("FormatOf: %q %v", f, err)
	}
}
