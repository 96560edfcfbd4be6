package crossmatch

import (
	"context"
	"fmt"
	"math"
	"runtime"

	"starvet/crossmatch/catalog"
)

// SelfMatch returns, per row of t, the number of OTHER rows closer than
// radiusArcsec (strictly) at the catalog's own epoch: the duplicate count
// used by the quality stage. Rows without a position get -1.
func SelfMatch(ctx context.Context, t *catalog.Table, radiusArcsec float64, workers int) ([]int32, error) {
	if !(radiusArcsec >= 0) || math.IsInf(radiusArcsec, 0) {
		return nil, fmt.Errorf("self-match: radius %g arcsec: %w", radiusArcsec, ErrBadOptions)
	}
	if err := checkTable(t); err != nil {
		return nil, err
	}
	if t.Len() > math.MaxInt32 {
		return nil, fmt.Errorf("self-match: catalog %q: more than %d rows", t.Name, math.MaxInt32)
	}
	ra, dec := t.Cols[catalog.RA], t.Cols[catalog.Dec]
	for i := range ra {
		if math.IsInf(ra[i], 0) {
			return nil, rowErr("self-match", t, i, catalog.RA, ErrBadPosition, "value %g", ra[i])
		}
		if d := dec[i]; !math.IsNaN(d) && !(d >= -90 && d <= 90) {
			return nil, rowErr("self-match", t, i, catalog.Dec, ErrBadPosition, "value %g outside [-90, 90]", d)
		}
	}
	ix, err := NewIndex(ctx, ra, dec, workers)
	if err != nil {
		return nil, fmt.Errorf("self-match: catalog %q: %w", t.Name, err)
	}
	n := t.Len()
	counts := make([]int32, n)
	radiusRad := radiusArcsec * radPerArcsec
	nb := (n + batchRows - 1) / batchRows
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	err = parallelBatches(ctx, nb, workers, func(b int) {
		var buf []Neighbor
		for i := b * batchRows; i < min(n, (b+1)*batchRows); i++ {
			if math.IsNaN(ra[i]) || math.IsNaN(dec[i]) {
				counts[i] = -1
				continue
			}
			buf = ix.Within(ra[i], dec[i], radiusArcsec/arcsecPerDeg, buf[:0])
			c := int32(0)
			for _, nb := range buf {
				if int(nb.Row) != i && nb.SepRad < radiusRad {
					c++
				}
			}
			counts[i] = c
		}
	})
	if err != nil {
		return nil, err
	}
	return counts, nil
}
