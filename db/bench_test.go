package db

import (
	"context"
	"fmt"
	"os"
	"syscall"
	"testing"
	"time"
)

// BenchmarkAddStars writes one run of 1M computed stars (verdict, inputs,
// 1 match, 2 reasons each) in batches of 20,000, as the pipeline does.
// rows/s counts every row inserted (inputs, matches, verdicts, reasons); bytes/star is the ledger size (db + wal) over the stars.
//
// "sorted" sends the stars in ascending id order (what the pipeline should
// do, see AddStars); "shuffled" in a fixed pseudo-random order.
func BenchmarkAddStars(b *testing.B) {
	b.Run("sorted", func(b *testing.B) { benchAddStars(b, 1_000_000, false) })
	b.Run("shuffled", func(b *testing.B) { benchAddStars(b, 1_000_000, true) })
}

// BenchmarkAddStars100k is the same at a tenth of the size, for profiling.
func BenchmarkAddStars100k(b *testing.B) {
	b.Run("sorted", func(b *testing.B) { benchAddStars(b, 100_000, false) })
	b.Run("shuffled", func(b *testing.B) { benchAddStars(b, 100_000, true) })
}

func benchAddStars(b *testing.B, nStars int, shuffle bool) {
	const batchSize = 20_000
	ctx := context.Background()
	batch := make([]StarRecord, batchSize)
	for i := range batch {
		batch[i] = record("", i, 0, "accepted")
	}
	var cpu time.Duration
	for b.Loop() {
		b.StopTimer()
		p := tempLedger(b)
		l, err := Open(ctx, p, Options{})
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "bench"})
		if err != nil {
			b.Fatal(err)
		}
		for start := 0; start < nStars; start += batchSize {
			b.StopTimer()
			for i := range batch {
				k := start + i
				if shuffle {
					k = k * 7919 % nStars // 7919 is prime and does not divide nStars
				}
				batch[i].StarID = fmt.Sprintf("bench-%07d", k)
				batch[i].Inputs.InputHash = batch[i].StarID
			}
			cpu -= cpuTime()
			b.StartTimer()
			if err := w.AddStars(ctx, batch); err != nil {
				b.Fatal(err)
			}
			b.StopTimer()
			cpu += cpuTime()
			b.StartTimer()
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
		b.ReportMetric(float64(size)/float64(nStars), "bytes/star")
		b.StartTimer()
	}
	rowsPerStar := 1.0 + 1 + 1 + 2 // inputs, matches, verdicts, reasons
	b.ReportMetric(rowsPerStar*float64(nStars*b.N)/b.Elapsed().Seconds(), "rows/s")
	b.ReportMetric(float64(nStars*b.N)/b.Elapsed().Seconds(), "stars/s")
	// On a shared machine wall time depends on the neighbours; the process
	// CPU time spent inside AddStars much less.
	b.ReportMetric(rowsPerStar*float64(nStars*b.N)/cpu.Seconds(), "rows/cpu-s")
}

// cpuTime is the user+system time of this process so far.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		panic(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkIncremental measures what an incremental run needs from a 1M-star
// ledger: PreviousState (one pass over computed_verdicts into a map) and a
// rerun that recomputes 1% of the stars and carries the rest (which writes
// nothing for them), then the audit queries over the verdicts view. The
// first run is built once, outside the timings.
func BenchmarkIncremental(b *testing.B) {
	const nStars = 1_000_000
	ctx := context.Background()
	l, err := Open(ctx, tempLedger(b), Options{})
	if err != nil {
		b.Fatal(err)
	}
	defer l.Close()
	first := benchFirstRun(b, l, nStars, func(id string, i int) StarRecord { return record(id, i, 0, "accepted") })
	b.Run("PreviousState", func(b *testing.B) {
		cpu := cpuTime()
		for b.Loop() {
			p, err := l.PreviousState(ctx, first)
			if err != nil || p.Len() != nStars {
				b.Fatalf("%v, %v", p, err)
			}
		}
		b.ReportMetric((cpuTime()-cpu).Seconds()/float64(b.N), "cpu-s/op")
	})
	b.Run("Rerun1pct", func(b *testing.B) {
		const batchSize = 2_000
		batch := make([]StarRecord, batchSize)
		cpu := cpuTime()
		for b.Loop() {
			w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "bench"})
			if err != nil {
				b.Fatal(err)
			}
			for start := 0; start < nStars/100; start += batchSize {
				for i := range batch {
					batch[i] = record(fmt.Sprintf("bench-%07d", 100*(start+i)), start+i, 1, "accepted")
				}
				if err := w.AddStars(ctx, batch); err != nil {
					b.Fatal(err)
				}
			}
			if err := w.Finish(ctx, RunSummary{StarsTotal: nStars, StarsComputed: nStars / 100,
				Counts: map[string]int64{"accepted": nStars}}); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric((cpuTime()-cpu).Seconds()/float64(b.N), "cpu-s/op")
	})
	// The audit queries against the same ledger (now two complete runs of
	// 1M stars each, or more).
	b.Run("StatusCounts", func(b *testing.B) {
		for b.Loop() {
			c, err := l.StatusCounts(ctx, first)
			if err != nil || c["accepted"] != nStars {
				b.Fatalf("%v, %v", c, err)
			}
		}
	})
	b.Run("Diff", func(b *testing.B) {
		for b.Loop() {
			d, err := l.DiffN(ctx, first, 0, 50)
			if err != nil || d.Unchanged != nStars {
				b.Fatalf("%+v, %v", d, err)
			}
		}
	})
	b.Run("Why", func(b *testing.B) {
		for b.Loop() {
			h, err := l.Why(ctx, "bench-0500000")
			if err != nil || len(h.Runs) < 2 {
				b.Fatalf("%+v, %v", h, err)
			}
		}
	})
	b.Run("ListStatus", func(b *testing.B) {
		for b.Loop() {
			n := 0
			if err := l.List(ctx, ListFilter{Status: "accepted"}, func(VerdictRow) error { n++; return nil }); err != nil || n != nStars {
				b.Fatalf("%d rows, %v", n, err)
			}
		}
	})
}

// benchFirstRun writes one complete run of n stars "bench-0000000", ...,
// made by mk, in batches of 20,000, outside any timing, and returns its id.
func benchFirstRun(b *testing.B, l *Ledger, n int, mk func(id string, i int) StarRecord) int64 {
	const batchSize = 20_000
	ctx := context.Background()
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "bench"})
	if err != nil {
		b.Fatal(err)
	}
	batch := make([]StarRecord, 0, batchSize)
	for start := 0; start < n; start += batchSize {
		batch = batch[:0]
		for i := start; i < min(start+batchSize, n); i++ {
			batch = append(batch, mk(fmt.Sprintf("bench-%07d", i), i))
		}
		if err := w.AddStars(ctx, batch); err != nil {
			b.Fatal(err)
		}
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		b.Fatal(err)
	}
	return w.ID()
}
