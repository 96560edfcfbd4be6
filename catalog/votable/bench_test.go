package votable

import (
	"bufio"
	"context"
	"encoding/base64"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"testing"

	"starvet/catalog"
	"starvet/internal/benchfile"
)

// benchColumns are the columns of catalog/csv's BenchmarkReadCSV: an id
// and 15 doubles, here with units so that they map by name in canonical
// units.
var benchColumns = benchfile.Columns

// writeBenchBinary2 writes rows rows as a BINARY2 VOTable with a minimal
// writer of our own (VOTable 1.3, section 5.5: per row a null bitmask,
// then each field; the id a variable-length char array led by its
// length), with a fixed seed and the value ranges of the CSV benchmark.
func writeBenchBinary2(tb testing.TB, path string, rows int) {
	tb.Helper()
	f, err := os.Create(path)
	if err != nil {
		tb.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	fmt.Fprintln(w, `<?xml version="1.0" encoding="utf-8"?>`)
	fmt.Fprintln(w, `<VOTABLE version="1.4" xmlns="http://www.ivoa.net/xml/VOTable/v1.3"><RESOURCE><TABLE name="bench">`)
	fmt.Fprintln(w, `<FIELD name="id" datatype="char" arraysize="*"/>`)
	for _, c := range benchColumns {
		fmt.Fprintf(w, "<FIELD name=%q datatype=\"double\" unit=%q/>\n", c.Name, c.Unit)
	}
	fmt.Fprint(w, `<DATA><BINARY2><STREAM encoding="base64">`)
	enc := base64.NewEncoder(base64.StdEncoding, w)
	rng := benchfile.NewRand()
	row := make([]byte, 0, 256)
	var vals [benchfile.NumValues]float64
	for i := range rows {
		row = append(row[:0], 0, 0) // 16 fields: two bytes of null flags, none set
		id := benchfile.Row(rng, i, &vals)
		row = binary.BigEndian.AppendUint32(row, uint32(len(id)))
		row = append(row, id...)
		for _, v := range vals {
			row = binary.BigEndian.AppendUint64(row, math.Float64bits(v))
		}
		enc.Write(row)
	}
	if err := enc.Close(); err != nil {
		tb.Fatal(err)
	}
	fmt.Fprintln(w, "</STREAM></BINARY2></DATA></TABLE></RESOURCE></VOTABLE>")
	if err := w.Flush(); err != nil {
		tb.Fatal(err)
	}
	if err := f.Close(); err != nil {
		tb.Fatal(err)
	}
}

// BenchmarkReadVOTableBinary2 reads 1,000,000 rows x 15 doubles plus a
// string id from a BINARY2 stream. The target is at most 1.5 s per op on
// 2 cores.
func BenchmarkReadVOTableBinary2(b *testing.B) {
	const rows = 1_000_000
	p := benchfile.Path(b, "bench.vot", func(tb testing.TB, p string) { writeBenchBinary2(tb, p, rows) })
	benchfile.Read(b, p, rows, func(p string) (int, int, error) {
		tab, rep, err := Read(context.Background(), catalog.Spec{Name: "bench", File: p}, catalog.ReadOptions{})
		if err != nil {
			return 0, 0, err
		}
		return tab.Len(), len(rep.Quarantined), nil
	})
}

// cpuSeconds is user+sys CPU of the process, reported beside wall time
// because the machine is shared.

// TestWriteBenchFile writes BenchmarkReadVOTableBinary2's file to STARVET_BENCH_WRITE, for
// a run that only reads it (see package starvet/internal/benchfile).
func TestWriteBenchFile(t *testing.T) {
	benchfile.Write(t, func(tb testing.TB, p string) { writeBenchBinary2(tb, p, 1_000_000) })
}
