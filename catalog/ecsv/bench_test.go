package ecsv

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/benchfile"
)

// writeBenchECSV writes the primary catalog of csvcat's BenchmarkReadCSV
// (its generator: same seed, same rows) as comma-delimited ECSV: a YAML
// header naming the 16 columns, then the same rows.
func writeBenchECSV(tb testing.TB, path string, rows int) {
	tb.Helper()
	f, err := os.Create(path)
	if err != nil {
		tb.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	w.WriteString("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: id, datatype: string}\n")
	for _, c := range benchfile.Columns {
		if u := strings.ReplaceAll(c.Unit, "/", " / "); u != "" { // the spacing astropy writes
			fmt.Fprintf(w, "# - {name: %s, unit: %s, datatype: float64}\n", c.Name, u)
		} else {
			fmt.Fprintf(w, "# - {name: %s, datatype: float64}\n", c.Name)
		}
	}
	fmt.Fprint(w, "# delimiter: ','\n")
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

// BenchmarkReadECSV reads 1,000,000 rows x 15 numeric columns (plus id) of
// ECSV: the rows of BenchmarkReadCSV under a YAML header. It should take
// no longer than BenchmarkReadCSV.
func BenchmarkReadECSV(b *testing.B) {
	const rows = 1_000_000
	p := benchfile.Path(b, "bench.ecsv", func(tb testing.TB, p string) { writeBenchECSV(tb, p, rows) })
	benchfile.Read(b, p, rows, func(p string) (int, int, error) {
		tab, rep, err := Read(context.Background(), catalog.Spec{Name: "bench", File: p}, catalog.ReadOptions{})
		if err != nil {
			return 0, 0, err
		}
		return tab.Len(), len(rep.Quarantined), nil
	})
}

// TestBenchFile checks the benchmark's file on a few rows: it reads whole,
// with the units of its header.
func TestBenchFile(t *testing.T) {
	p := filepath.Join(t.TempDir(), "b.ecsv")
	writeBenchECSV(t, p, 50)
	tab, rep, err := Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{Strict: true})
	if err != nil || tab.Len() != 50 || tab.Lines[0] != 22 {
		t.Fatalf("%v: kept %d, first line %v", err, tab.Len(), tab.Lines[:1])
	}
	if len(rep.Unused) != 0 || rep.Mapped["pm_ra"] != "pm_ra" {
		t.Fatalf("unused %v mapped %v", rep.Unused, rep.Mapped)
	}
}

// TestWriteBenchFile writes BenchmarkReadECSV's file to STARVET_BENCH_WRITE, for
// a run that only reads it (see package starvet/internal/benchfile).
func TestWriteBenchFile(t *testing.T) {
	benchfile.Write(t, func(tb testing.TB, p string) { writeBenchECSV(tb, p, 1_000_000) })
}
