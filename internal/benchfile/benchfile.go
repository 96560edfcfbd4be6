// Package benchfile gives the catalog readers' benchmarks their input, so
// that a read's peak memory can be measured apart from the writer's.
//
// By default a benchmark writes its file in its own temporary directory,
// in the same process, and the process's peak RSS includes the writer.
// To measure a read alone, write the file in one process and read it in
// another:
//
//	STARVET_BENCH_WRITE=/tmp/b.fits go test ./catalog/fits -run '^TestWriteBenchFile$'
//	go test -c -o /tmp/fits.test ./catalog/fits
//	STARVET_BENCH_FILE=/tmp/b.fits /usr/bin/time -f %M /tmp/fits.test -test.run '^$' -test.bench ReadFITS -test.benchtime=1x
//
// /usr/bin/time -f %M prints the peak RSS in KiB.
package benchfile

import (
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// Path is the file a benchmark reads: STARVET_BENCH_FILE when set (it must
// exist), else a file named name in the benchmark's temporary directory,
// written by write.
func Path(tb testing.TB, name string, write func(tb testing.TB, path string)) string {
	tb.Helper()
	if p := os.Getenv("STARVET_BENCH_FILE"); p != "" {
		if _, err := os.Stat(p); err != nil {
			tb.Fatalf("STARVET_BENCH_FILE: %v (write it first with STARVET_BENCH_WRITE=%s and -run '^TestWriteBenchFile$')", err, p)
		}
		return p
	}
	p := filepath.Join(tb.TempDir(), name)
	write(tb, p)
	return p
}

// Write is the body of a package's TestWriteBenchFile: it writes the
// benchmark's file to STARVET_BENCH_WRITE, and skips when that is unset.
func Write(t *testing.T, write func(tb testing.TB, path string)) {
	p := os.Getenv("STARVET_BENCH_WRITE")
	if p == "" {
		t.Skip("STARVET_BENCH_WRITE is not set")
	}
	write(t, p)
	t.Logf("wrote %s", p)
}

// Columns are the benchmark's primary catalog after its id: 15 numbers
// with their canonical units ("" for none).
var Columns = [NumValues]struct{ Name, Unit string }{
	{"ra", "deg"}, {"dec", "deg"}, {"ra_err", "mas"}, {"dec_err", "mas"},
	{"parallax", "mas"}, {"parallax_err", "mas"}, {"pm_ra", "mas/yr"}, {"pm_ra_err", "mas/yr"},
	{"pm_dec", "mas/yr"}, {"pm_dec_err", "mas/yr"}, {"corr_ra_dec", ""}, {"fit_residual", ""},
	{"excess_noise", "mas"}, {"mag", "mag"}, {"color", "mag"},
}

// NumValues is the number of numeric columns of a row.
const NumValues = 15

// NewRand is the generator every format's benchmark draws its rows from,
// so that all of them read the same catalog.
func NewRand() *rand.Rand { return rand.New(rand.NewPCG(1, 2)) }

// Row draws row i: its id, and its values in Columns order (uniform
// positions on the sphere's ra/dec box, unit-scale errors and parallaxes,
// proper motions of a few mas/yr; invented, not a survey's distribution).
func Row(rng *rand.Rand, i int, v *[NumValues]float64) string {
	*v = [NumValues]float64{rng.Float64() * 360, rng.Float64()*180 - 90, rng.Float64(), rng.Float64(),
		rng.NormFloat64(), rng.Float64() * 0.3, rng.NormFloat64() * 10, rng.Float64(), rng.NormFloat64() * 10, rng.Float64(),
		rng.Float64()*2 - 1, 1 + rng.Float64()*0.4, rng.Float64(), 12 + 8*rng.Float64(), rng.Float64() * 3}
	return fmt.Sprintf("bench-%08d", i)
}

// TextHeader is the delimited-text header line of the catalog.
func TextHeader() string {
	names := []string{"id"}
	for _, c := range Columns {
		names = append(names, c.Name)
	}
	return strings.Join(names, ",")
}

// AppendText appends one row as delimited text, rounded as a catalog
// publishes it (positions to 1e-9 deg, the rest to 4 or 5 decimals).
func AppendText(b []byte, id string, v *[NumValues]float64) []byte {
	return fmt.Appendf(b, "%s,%.9f,%.9f,%.4f,%.4f,%.5f,%.5f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f,%.4f\n",
		id, v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7], v[8], v[9], v[10], v[11], v[12], v[13], v[14])
}

// CPUSeconds is the process's user plus system CPU time so far, for the
// benchmarks' cpu-s/op metric.
func CPUSeconds(tb testing.TB) float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		tb.Fatal(err)
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}

// Read is the body of a reader's 1M-row benchmark: it times read on the
// file at path, checks that every one of rows rows was kept and none
// quarantined, and reports bytes per second and CPU seconds (user + sys,
// all threads) per op beside the wall time, because the machine is shared
// and wall time swings with its load.
func Read(b *testing.B, path string, rows int, read func(path string) (kept, quarantined int, err error)) {
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	b.SetBytes(st.Size())
	b.ReportAllocs()
	cpu0 := CPUSeconds(b)
	n := 0
	b.ResetTimer()
	for b.Loop() {
		n++
		kept, quarantined, err := read(path)
		if err != nil {
			b.Fatal(err)
		}
		if kept != rows || quarantined != 0 {
			b.Fatalf("kept %d of %d, quarantined %d", kept, rows, quarantined)
		}
	}
	b.ReportMetric((CPUSeconds(b)-cpu0)/float64(n), "cpu-s/op")
}
