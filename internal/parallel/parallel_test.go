package parallel

import (
	"context"
	"errors"
	"runtime"
	"sync/atomic"
	"testing"
)

func TestBatchesCoverEachIndexOnce(t *testing.T) {
	for _, c := range []struct{ n, batch, workers int }{{0, 4, 2}, {1, 4, 2}, {10, 3, 2}, {1000, 64, 0}, {7, 100, 8}} {
		hits := make([]int32, c.n)
		var lastDone atomic.Int64
		err := Batches(context.Background(), c.n, c.batch, c.workers, func(s *int, lo, hi int) {
			*s += hi - lo // per-goroutine state is the goroutine's own
			for i := lo; i < hi; i++ {
				atomic.AddInt32(&hits[i], 1)
			}
		}, func(done int) { lastDone.Store(int64(done)) })
		if err != nil {
			t.Fatal(err)
		}
		for i, h := range hits {
			if h != 1 {
				t.Fatalf("n=%d: index %d done %d times", c.n, i, h)
			}
		}
		if int(lastDone.Load()) != c.n {
			t.Errorf("n=%d: progress ended at %d", c.n, lastDone.Load())
		}
	}
}

func TestBatchesStopOnCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	var ran atomic.Int64
	err := Batches(ctx, 1000, 10, 2, func(_ *struct{}, lo, hi int) {
		if ran.Add(1) == 3 {
			cancel()
		}
	}, nil)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("err %v, want context.Canceled", err)
	}
	if r := ran.Load(); r >= 100 {
		t.Errorf("ran all %d batches after the cancel", r)
	}
}

func TestWorkers(t *testing.T) {
	if Workers(3) != 3 || Workers(0) != runtime.GOMAXPROCS(0) || Workers(-1) != runtime.GOMAXPROCS(0) {
		t.Error("Workers")
	}
}
