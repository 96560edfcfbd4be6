package csvcat

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"testing"

	"starvet/catalog"
	"starvet/internal/benchfile"
)

// writeBenchCSV writes rows rows of id plus 15 numeric columns with a fixed
// seed.
func writeBenchCSV(tb testing.TB, path string, rows int) {
	tb.Helper()
	f, err := os.Create(path)
	if err != nil {
		tb.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	fmt.Fprintln(w, benchfile.TextHeader())
	rng := benchfile.NewRand()
	var v [benchfile.NumValues]float64
	var line []byte
	for i := range rows {
		line = benchfile.AppendText(line[:0], benchfile.Row(rng, i, &v), &v)
		w.Write(line)
	}
	if err := w.Flush(); err != nil {
		tb.Fatal(err)
	}
	if err := f.Close(); err != nil {
		tb.Fatal(err)
	}
}

// BenchmarkReadCSV reads 1,000,000 rows x 15 numeric columns (plus id).
// The target is under about 3 s per op.
func BenchmarkReadCSV(b *testing.B) {
	const rows = 1_000_000
	p := benchfile.Path(b, "bench.csv", func(tb testing.TB, p string) { writeBenchCSV(tb, p, rows) })
	benchfile.Read(b, p, rows, func(p string) (int, int, error) {
		tab, rep, err := Read(context.Background(), catalog.Spec{Name: "bench", File: p}, catalog.ReadOptions{})
		if err != nil {
			return 0, 0, err
		}
		return tab.Len(), len(rep.Quarantined), nil
	})
}

// writePairCSV writes an invented primary of rows rows in the 14 columns of
// the end-to-end run benchmark and a secondary of rows rows in its 8
// columns, about a fifth of the distance cells empty, with a fixed seed.
func writePairCSV(tb testing.TB, primary, secondary string, rows int) {
	tb.Helper()
	rng := rand.New(rand.NewPCG(3, 4))
	write := func(path, header string, row func(buf []byte, i int) []byte) {
		f, err := os.Create(path)
		if err != nil {
			tb.Fatal(err)
		}
		w := bufio.NewWriterSize(f, 1<<20)
		w.WriteString(header + "\n")
		buf := make([]byte, 0, 256)
		for i := range rows {
			buf = append(row(buf[:0], i), '\n')
			w.Write(buf)
		}
		if err := w.Flush(); err != nil {
			tb.Fatal(err)
		}
		if err := f.Close(); err != nil {
			tb.Fatal(err)
		}
	}
	num := func(buf []byte, x float64, prec int) []byte {
		return strconv.AppendFloat(append(buf, ','), x, 'f', prec, 64)
	}
	write(primary, "id,ra,dec,ra_err,dec_err,parallax,parallax_err,pm_ra,pm_ra_err,pm_dec,pm_dec_err,fit_residual,fit_visits,mag",
		func(buf []byte, i int) []byte {
			buf = strconv.AppendInt(append(buf, "pa"...), int64(i), 10)
			buf = num(buf, rng.Float64()*360, 9)
			buf = num(buf, rng.Float64()*180-90, 9)
			e := 0.015 + 0.5*rng.Float64()
			buf = num(buf, 0.7*e, 4)
			buf = num(buf, 0.7*e, 4)
			buf = num(buf, 0.3+e*rng.NormFloat64(), 4)
			buf = num(buf, e, 4)
			buf = num(buf, 5*rng.NormFloat64(), 4)
			buf = num(buf, 1.1*e, 4)
			buf = num(buf, 5*rng.NormFloat64(), 4)
			buf = num(buf, 1.1*e, 4)
			buf = num(buf, 1+0.05*rng.Float64(), 3)
			buf = strconv.AppendInt(append(buf, ','), int64(8+rng.IntN(18)), 10)
			return num(buf, 12.5+8*rng.Float64(), 3)
		})
	write(secondary, "id,ra,dec,rv,rv_err,snr,distance,distance_err", func(buf []byte, i int) []byte {
		buf = strconv.AppendInt(append(buf, "sb"...), int64(i), 10)
		buf = num(buf, rng.Float64()*360, 9)
		buf = num(buf, rng.Float64()*180-90, 9)
		buf = num(buf, 80*rng.NormFloat64(), 2)
		buf = num(buf, 1+9*rng.Float64(), 2)
		buf = num(buf, 10+90*rng.Float64(), 1)
		if rng.Float64() < 0.2 {
			d := 0.5 + 20*rng.Float64()
			buf = num(buf, d, 3)
			return num(buf, 0.1*d, 3)
		}
		return append(buf, ",,"...)
	})
}

// BenchmarkReadPair reads a 1,000,000-row primary (14 columns) and a
// 1,000,000-row secondary (8 columns) at the same time, as the engine's
// ingest does. The target is well under 1.5 s wall per op on 2 cores.
func BenchmarkReadPair(b *testing.B) {
	const rows = 1_000_000
	dir := b.TempDir()
	pp, sp := filepath.Join(dir, "primary.csv"), filepath.Join(dir, "secondary.csv")
	writePairCSV(b, pp, sp, rows)
	cpu0 := benchfile.CPUSeconds(b)
	n := 0
	b.ResetTimer()
	for b.Loop() {
		n++
		var wg sync.WaitGroup
		errs := make([]error, 2)
		for k, p := range []string{pp, sp} {
			wg.Add(1)
			go func() {
				defer wg.Done()
				tab, rep, err := Read(context.Background(), catalog.Spec{Name: "pair", File: p}, catalog.ReadOptions{})
				if err == nil && (tab.Len() != rows || len(rep.Quarantined) != 0) {
					err = fmt.Errorf("%s: kept %d of %d, quarantined %d", p, tab.Len(), rows, len(rep.Quarantined))
				}
				errs[k] = err
			}()
		}
		wg.Wait()
		for _, err := range errs {
			if err != nil {
				b.Fatal(err)
			}
		}
	}
	b.ReportMetric((benchfile.CPUSeconds(b)-cpu0)/float64(n), "cpu-s/op")
}

// TestWriteBenchFile writes BenchmarkReadCSV's file to STARVET_BENCH_WRITE, for
// a run that only reads it (see package starvet/internal/benchfile).
func TestWriteBenchFile(t *testing.T) {
	benchfile.Write(t, func(tb testing.TB, p string) { writeBenchCSV(tb, p, 1_000_000) })
}
