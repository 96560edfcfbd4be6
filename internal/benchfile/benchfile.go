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
	"os"
	"path/filepath"
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
