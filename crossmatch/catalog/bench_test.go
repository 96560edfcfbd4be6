package catalog

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"syscall"
	"testing"
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
	fmt.Fprintln(w, "id,ra,dec,ra_err,dec_err,parallax,parallax_err,pm_ra,pm_ra_err,pm_dec,pm_dec_err,corr_ra_dec,fit_residual,excess_noise,mag,color")
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range rows {
		fmt.Fprintf(w, "bench-%08d,%.9f,%.9f,%.4f,%.4f,%.5f,%.5f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f\n",
			i, rng.Float64()*360, rng.Float64()*180-90, rng.Float64(), rng.Float64(),
			rng.NormFloat64(), rng.Float64()*0.3, rng.NormFloat64()*10, rng.Float64(), rng.NormFloat64()*10, rng.Float64(),
			rng.Float64()*2-1, 1+rng.Float64()*0.4, rng.Float64(), 12+8*rng.Float64(), rng.Float64()*3)
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
	p := filepath.Join(b.TempDir(), "bench.csv")
	writeBenchCSV(b, p, rows)
	st, err := os.Stat(p)
	if err != nil {
		b.Fatal(err)
	}
	b.SetBytes(st.Size())
	// CPU seconds (user+sys, all threads) per op, reported beside wall time
	// because the machine is shared and wall time swings with its load.
	cpu0 := cpuSeconds(b)
	n := 0
	b.ResetTimer()
	for b.Loop() {
		n++
		tab, rep, err := Read(context.Background(), Spec{Name: "bench", File: p}, ReadOptions{})
		if err != nil {
			b.Fatal(err)
		}
		if tab.Len() != rows || len(rep.Quarantined) != 0 {
			b.Fatalf("kept %d of %d, quarantined %d", tab.Len(), rows, len(rep.Quarantined))
		}
	}
	b.ReportMetric((cpuSeconds(b)-cpu0)/float64(n), "cpu-s/op")
}

func cpuSeconds(b *testing.B) float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		b.Fatal(err)
	}
	tv := func(t syscall.Timeval) float64 { return float64(t.Sec) + float64(t.Usec)/1e6 }
	return tv(ru.Utime) + tv(ru.Stime)
}
