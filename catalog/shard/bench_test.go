package shard

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"starvet/catalog"
)

// BenchmarkShardWriteRead1M writes and reads back a shard of 1M rows of
// 25 columns (about 210 MB), reporting both directions in MB/s and ns per
// row.
func BenchmarkShardWriteRead1M(b *testing.B) {
	const n = 1_000_000
	src := &catalog.Table{Name: "alpha-survey", Role: catalog.Astrometry, EpochJyr: 2016}
	src.IDs = make([]string, n)
	src.Lines = make([]int, n)
	for i := range n {
		src.IDs[i] = fmt.Sprintf("as-%019d", 4_000_000_000_000_000+i*7919)
		src.Lines[i] = i + 2
	}
	cols := 0
	for f := catalog.Field(1); f < catalog.NumFields && cols < 25; f++ {
		col := make([]float64, n)
		for i := range col {
			col[i] = float64(f) + float64(i)*1e-6
		}
		col[n/2] = math.NaN()
		src.Cols[f] = col
		cols++
	}
	path := filepath.Join(b.TempDir(), "bench.shard")
	ctx := context.Background()
	var write, read time.Duration
	var size int64
	b.ResetTimer()
	for range b.N {
		t0 := time.Now()
		if err := WriteAll(path, src); err != nil {
			b.Fatal(err)
		}
		t1 := time.Now()
		got, _, err := Reader{}.Read(ctx, catalog.Spec{File: path}, catalog.ReadOptions{})
		if err != nil {
			b.Fatal(err)
		}
		read += time.Since(t1)
		write += t1.Sub(t0)
		if got.Len() != n || got.IDs[n-1] != src.IDs[n-1] {
			b.Fatalf("read back %d rows", got.Len())
		}
	}
	b.StopTimer()
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	size = st.Size()
	mb := float64(size) / 1e6 * float64(b.N)
	b.ReportMetric(mb/write.Seconds(), "write-MB/s")
	b.ReportMetric(mb/read.Seconds(), "read-MB/s")
	b.ReportMetric(float64(write.Nanoseconds())/float64(n*b.N), "write-ns/row")
	b.ReportMetric(float64(read.Nanoseconds())/float64(n*b.N), "read-ns/row")
	b.ReportMetric(float64(size)/1e6, "file-MB")
}
