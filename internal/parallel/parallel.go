// Package parallel is starvet's one worker pool: work over the indices
// [0, n) cut into fixed batches, claimed in order by a few goroutines,
// with one cancellation contract: the context is checked between batches,
// and a cancelled run returns ctx.Err() after every started batch has
// finished, leaving the batches it did not reach untouched.
package parallel

import (
	"context"
	"runtime"
	"sync"
	"sync/atomic"
)

// Workers is the number of goroutines for a requested count: n itself, or
// runtime.GOMAXPROCS(0) when n <= 0.
func Workers(n int) int {
	if n <= 0 {
		return runtime.GOMAXPROCS(0)
	}
	return n
}

// Batches calls do(state, lo, hi) for consecutive batches [lo, hi) of at
// most batch indices covering [0, n), on Workers(workers) goroutines (never
// more than there are batches). Each goroutine owns one zero-valued S,
// passed to every batch it runs, for scratch space that must not be shared.
// progress, if not nil, is called after each batch with the number of
// indices done so far; calls are serialised. Batches returns ctx.Err() if
// it stopped early.
func Batches[S any](ctx context.Context, n, batch, workers int, do func(s *S, lo, hi int), progress func(done int)) error {
	if n <= 0 {
		return ctx.Err()
	}
	batch = max(batch, 1)
	nBatch := (n + batch - 1) / batch
	workers = max(1, min(Workers(workers), nBatch))
	var next atomic.Int64
	var mu sync.Mutex
	done := 0
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var s S
			for ctx.Err() == nil {
				b := int(next.Add(1) - 1)
				if b >= nBatch {
					return
				}
				lo, hi := b*batch, min((b+1)*batch, n)
				do(&s, lo, hi)
				if progress != nil {
					mu.Lock()
					done += hi - lo
					progress(done)
					mu.Unlock()
				}
			}
		}()
	}
	wg.Wait()
	return ctx.Err()
}
