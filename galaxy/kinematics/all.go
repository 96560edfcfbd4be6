package kinematics

import (
	"context"
	"fmt"

	"starvet/galaxy/potential"
	"starvet/internal/parallel"
)

// batchSize is the number of stars a worker takes at a time; the context is
// checked between batches.
const batchSize = 64

// EvaluateAll evaluates every star with workers goroutines (parallel.Workers:
// <= 0 means GOMAXPROCS). Each star's numbers come from its own random
// streams, so the results do not depend on the worker count or the order of
// stars. progress, if not nil, is called with the number of stars done so
// far after each batch; calls are serialised. On cancellation the context's
// error is returned, after the batches already started, with the results
// computed so far (stars not reached have a zero Result, with an empty ID).
// p is shared by the goroutines.
func EvaluateAll(ctx context.Context, stars []Star, set *Settings, p potential.Potential, workers int, progress func(done int)) ([]Result, error) {
	if err := set.Validate(); err != nil {
		return nil, err
	}
	results := make([]Result, len(stars))
	err := parallel.Batches(ctx, len(stars), batchSize, workers, func(w *worker, lo, hi int) {
		for i := lo; i < hi; i++ {
			w.evaluate(&stars[i], set, p, &results[i])
		}
	}, progress)
	if err != nil {
		return results, fmt.Errorf("kinematics interrupted: %w", err)
	}
	return results, nil
}
