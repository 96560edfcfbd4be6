package kinematics

import (
	"context"
	"fmt"
	"runtime"
	"sync"
	"sync/atomic"

	"starvet/galaxy/potential"
)

// batchSize is the number of stars a worker takes at a time; the context is
// checked between batches.
const batchSize = 64

// EvaluateAll evaluates every star with workers goroutines (<= 0 means
// runtime.GOMAXPROCS(0)). Each star's numbers come from its own random
// streams, so the results do not depend on the worker count or the order of
// stars. progress, if not nil, is called with the number of stars done so
// far after each batch; calls are serialised. On cancellation the context's
// error is returned with the results computed so far (stars not reached
// have a zero Result, with an empty ID). p is shared by the goroutines.
func EvaluateAll(ctx context.Context, stars []Star, set *Settings, p potential.Potential, workers int, progress func(done int)) ([]Result, error) {
	if err := set.Validate(); err != nil {
		return nil, err
	}
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	results := make([]Result, len(stars))
	nBatch := (len(stars) + batchSize - 1) / batchSize
	workers = max(1, min(workers, nBatch))
	var next atomic.Int64
	var mu sync.Mutex
	done := 0
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var w worker
			for ctx.Err() == nil {
				b := int(next.Add(1) - 1)
				if b >= nBatch {
					return
				}
				lo, hi := b*batchSize, min((b+1)*batchSize, len(stars))
				for i := lo; i < hi; i++ {
					w.evaluate(&stars[i], set, p, &results[i])
				}
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
	if err := ctx.Err(); err != nil {
		return results, fmt.Errorf("kinematics interrupted: %w", err)
	}
	return results, nil
}
