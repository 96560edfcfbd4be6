package parquetcat

import (
	"context"
	"os"
	"testing"

	"github.com/parquet-go/parquet-go"

	"starvet/catalog"
	"starvet/internal/benchfile"
)

// benchRow is the CSV benchmark's primary catalog (catalog/csv's
// writeBenchCSV): an id and 15 numbers.
type benchRow struct {
	ID          string  `parquet:"id"`
	RA          float64 `parquet:"ra"`
	Dec         float64 `parquet:"dec"`
	RAErr       float64 `parquet:"ra_err"`
	DecErr      float64 `parquet:"dec_err"`
	Parallax    float64 `parquet:"parallax"`
	ParallaxErr float64 `parquet:"parallax_err"`
	PMRA        float64 `parquet:"pm_ra"`
	PMRAErr     float64 `parquet:"pm_ra_err"`
	PMDec       float64 `parquet:"pm_dec"`
	PMDecErr    float64 `parquet:"pm_dec_err"`
	CorrRADec   float64 `parquet:"corr_ra_dec"`
	FitResidual float64 `parquet:"fit_residual"`
	ExcessNoise float64 `parquet:"excess_noise"`
	Mag         float64 `parquet:"mag"`
	Color       float64 `parquet:"color"`
}

// writeBenchParquet writes rows rows with the same seed and draws as
// writeBenchCSV, unrounded, snappy-compressed, in row groups of 131,072
// rows (about the size common writers default to).
func writeBenchParquet(tb testing.TB, path string, rows int) {
	tb.Helper()
	f, err := os.Create(path)
	if err != nil {
		tb.Fatal(err)
	}
	w := parquet.NewGenericWriter[benchRow](f, parquet.Compression(&parquet.Snappy), parquet.MaxRowsPerRowGroup(131072))
	rng := benchfile.NewRand()
	var v [benchfile.NumValues]float64
	buf := make([]benchRow, 0, 8192)
	flush := func() {
		if _, err := w.Write(buf); err != nil {
			tb.Fatal(err)
		}
		buf = buf[:0]
	}
	for i := range rows {
		id := benchfile.Row(rng, i, &v)
		buf = append(buf, benchRow{id, v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7], v[8], v[9], v[10], v[11], v[12], v[13], v[14]})
		if len(buf) == cap(buf) {
			flush()
		}
	}
	flush()
	if err := w.Close(); err != nil {
		tb.Fatal(err)
	}
	if err := f.Close(); err != nil {
		tb.Fatal(err)
	}
}

// BenchmarkReadParquet reads 1,000,000 rows x 15 numeric columns (plus
// id). The target is at most 0.5 s per op on 2 cores.
func BenchmarkReadParquet(b *testing.B) {
	const rows = 1_000_000
	p := benchfile.Path(b, "bench.parquet", func(tb testing.TB, p string) { writeBenchParquet(tb, p, rows) })
	benchfile.Read(b, p, rows, func(p string) (int, int, error) {
		tab, rep, err := Read(context.Background(), catalog.Spec{Name: "bench", File: p}, catalog.ReadOptions{})
		if err != nil {
			return 0, 0, err
		}
		return tab.Len(), len(rep.Quarantined), nil
	})
}

// TestWriteBenchFile writes BenchmarkReadParquet's file to STARVET_BENCH_WRITE, for
// a run that only reads it (see package starvet/internal/benchfile).
func TestWriteBenchFile(t *testing.T) {
	benchfile.Write(t, func(tb testing.TB, p string) { writeBenchParquet(tb, p, 1_000_000) })
}
