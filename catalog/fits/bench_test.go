package fitscat

import (
	"bufio"
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/benchfile"
)

// benchColumns are the columns of catalog/csv's BenchmarkReadCSV primary:
// a 14-character id and 15 float64 columns, with FITS units.
var benchColumns = benchfile.Columns

// headerBlocks lays cards out as a FITS header: 80 bytes each, END, blank
// to a whole block.
func headerBlocks(cards []string) []byte {
	var sb strings.Builder
	for _, c := range append(cards, "END") {
		sb.WriteString(c + strings.Repeat(" ", 80-len(c)))
	}
	for sb.Len()%blockBytes != 0 {
		sb.WriteByte(' ')
	}
	return []byte(sb.String())
}

// writeBenchFITS writes a primary HDU without data and one BINTABLE of rows
// rows in benchColumns, values drawn as catalog/csv's generator draws them
// (same seed), stored as float64.
func writeBenchFITS(tb testing.TB, path string, rows int) {
	tb.Helper()
	f, err := os.Create(path)
	if err != nil {
		tb.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	w.Write(headerBlocks([]string{"SIMPLE  =                    T", "BITPIX  =                    8", "NAXIS   =                    0", "EXTEND  =                    T"}))
	const idBytes = 14
	rowBytes := idBytes + 8*len(benchColumns)
	cards := []string{"XTENSION= 'BINTABLE'", "BITPIX  =                    8", "NAXIS   =                    2",
		fmt.Sprintf("NAXIS1  = %20d", rowBytes), fmt.Sprintf("NAXIS2  = %20d", rows),
		"PCOUNT  =                    0", "GCOUNT  =                    1", fmt.Sprintf("TFIELDS = %20d", 1+len(benchColumns)),
		"TTYPE1  = 'id'", "TFORM1  = '14A'", "EXTNAME = 'BENCH'"}
	for i, c := range benchColumns {
		cards = append(cards, fmt.Sprintf("TTYPE%-3d= '%s'", i+2, c.Name), fmt.Sprintf("TFORM%-3d= 'D'", i+2))
		if c.Unit != "" {
			cards = append(cards, fmt.Sprintf("TUNIT%-3d= '%s'", i+2, c.Unit))
		}
	}
	w.Write(headerBlocks(cards))
	rng := benchfile.NewRand()
	row := make([]byte, rowBytes)
	var vals [benchfile.NumValues]float64
	for i := range rows {
		copy(row, benchfile.Row(rng, i, &vals))
		for k, v := range vals {
			binary.BigEndian.PutUint64(row[idBytes+8*k:], math.Float64bits(v))
		}
		w.Write(row)
	}
	if pad := (int64(rows) * int64(rowBytes)) % blockBytes; pad != 0 {
		w.Write(make([]byte, blockBytes-pad))
	}
	if err := w.Flush(); err != nil {
		tb.Fatal(err)
	}
	if err := f.Close(); err != nil {
		tb.Fatal(err)
	}
}

// BenchmarkReadFITS reads 1,000,000 rows x 15 float64 columns plus a text
// id. The target is at most 0.35 s per op on 2 cores.
func BenchmarkReadFITS(b *testing.B) {
	const rows = 1_000_000
	p := benchfile.Path(b, "bench.fits", func(tb testing.TB, p string) { writeBenchFITS(tb, p, rows) })
	benchfile.Read(b, p, rows, func(p string) (int, int, error) {
		tab, rep, err := Read(context.Background(), catalog.Spec{Name: "bench", File: p}, catalog.ReadOptions{})
		if err != nil {
			return 0, 0, err
		}
		return tab.Len(), len(rep.Quarantined), nil
	})
}

// The benchmark's writer makes a file fitsverify-clean tables read back:
// a small one, checked value by value against the generator.
func TestBenchWriterRoundTrip(t *testing.T) {
	p := filepath.Join(t.TempDir(), "small.fits")
	writeBenchFITS(t, p, 3)
	tab, rep, err := Read(context.Background(), catalog.Spec{Name: "small", File: p}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	ra := rng.Float64() * 360
	if tab.Len() != 3 || tab.IDs[2] != "bench-00000002" || tab.Cols[catalog.RA][0] != ra || len(rep.Unused) != 0 {
		t.Errorf("ids %v ra %v (want %v) unused %v", tab.IDs, tab.Cols[catalog.RA], ra, rep.Unused)
	}
}

// TestWriteBenchFile writes BenchmarkReadFITS's file to STARVET_BENCH_WRITE, for
// a run that only reads it (see package starvet/internal/benchfile).
func TestWriteBenchFile(t *testing.T) {
	benchfile.Write(t, func(tb testing.TB, p string) { writeBenchFITS(tb, p, 1_000_000) })
}
