package db

import (
	"context"
	"fmt"
	"os"
	"testing"
)

// BenchmarkAddStars writes one run of 1M computed stars (verdict, inputs,
// 1 match, 2 reasons each) in batches of 20,000, as the pipeline does.
// rows/s counts every row inserted (stars, inputs, matches, verdicts,
// reasons); bytes/star is the ledger size (db + wal) over the stars.
func BenchmarkAddStars(b *testing.B) {
	const nStars, batchSize = 1_000_000, 20_000
	ctx := context.Background()
	batch := make([]StarRecord, batchSize)
	for i := range batch {
		batch[i] = record("", i, 0, "accepted")
	}
	for b.Loop() {
		b.StopTimer()
		p := tempLedger(b)
		l, err := Open(ctx, p, Options{})
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		w, err := l.BeginRun(ctx, RunInfo{ToolVersion: "bench"})
		if err != nil {
			b.Fatal(err)
		}
		for start := 0; start < nStars; start += batchSize {
			b.StopTimer()
			for i := range batch {
				batch[i].StarID = fmt.Sprintf("bench-%07d", (start+i)*7919%nStars)
				batch[i].Inputs.InputHash = batch[i].StarID
			}
			b.StartTimer()
			if err := w.AddStars(ctx, batch); err != nil {
				b.Fatal(err)
			}
		}
		if err := w.Finish(ctx, RunSummary{}); err != nil {
			b.Fatal(err)
		}
		b.StopTimer()
		if _, err := l.db.Exec("PRAGMA wal_checkpoint(TRUNCATE)"); err != nil {
			b.Fatal(err)
		}
		l.Close()
		var size int64
		for _, suffix := range []string{"", "-wal"} {
			if st, err := os.Stat(p + suffix); err == nil {
				size += st.Size()
			}
		}
		b.ReportMetric(float64(size)/nStars, "bytes/star")
		b.StartTimer()
	}
	rowsPerStar := 1.0 + 1 + 1 + 1 + 2 // stars, inputs, matches, verdicts, reasons
	b.ReportMetric(rowsPerStar*nStars*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
	b.ReportMetric(nStars*float64(b.N)/b.Elapsed().Seconds(), "stars/s")
}
