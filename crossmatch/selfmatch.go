package crossmatch

import (
	"context"
	"fmt"
	"math"

	"starvet/catalog"
	"starvet/internal/parallel"
	"starvet/internal/units"
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
	counts := make([]int32, t.Len())
	for i := range counts {
		if math.IsNaN(ra[i]) || math.IsNaN(dec[i]) {
			counts[i] = -1
		}
	}
	radiusRad := radiusArcsec * units.RadPerArcsec
	// Query in the index's own (spatial) order, for cache locality.
	err = parallel.Batches(ctx, ix.Indexed(), batchRows, workers, func(_ *struct{}, lo, hi int) {
		var buf []hit
		for p := lo; p < hi; p++ {
			q := ix.pts[p]
			buf = ix.within(q.raDeg, q.decDeg, radiusArcsec/units.ArcsecPerDeg, buf[:0])
			c := int32(0)
			for _, h := range buf {
				if int(h.pos) != p && h.sepRad < radiusRad {
					c++
				}
			}
			counts[ix.row[p]] = c
		}
	}, nil)
	if err != nil {
		return nil, err
	}
	return counts, nil
}
