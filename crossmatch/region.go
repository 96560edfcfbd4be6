package crossmatch

import (
	"context"
	"fmt"
	"math"
	"strings"

	"starvet/catalog"
	"starvet/crossmatch/sky"
	"starvet/internal/parallel"
	"starvet/internal/units"
)

// Region describes a sky tile's part of two catalogs. A tile holds its own
// primaries and, around them, a margin of rows of both catalogs; a row is
// Inner when every row of the whole catalogs within match reach of it is in
// the tile's tables too. The one-to-one resolution and the ambiguity flags
// of a primary depend only on its connected component of the candidate
// graph (primaries and secondaries joined by candidate pairs), so an owned
// primary's match equals the whole-catalog match when every row of its
// component is Inner. Match checks that and fails otherwise.
type Region struct {
	Owned          []bool // per primary row: the tile writes this star
	PrimaryInner   []bool // per primary row
	SecondaryInner []bool // per secondary row
}

// maxReported bounds the star ids an ErrRegionReach error lists.
const maxReported = 5

// check fails when a component of the candidate graph that holds an owned
// primary also holds a row that is not inner.
func (r *Region) check(primary, secondary *catalog.Table, c *candidateSet) error {
	n1 := primary.Len()
	if len(r.Owned) != n1 || len(r.PrimaryInner) != n1 || len(r.SecondaryInner) != secondary.Len() {
		return fmt.Errorf("match: region flags for %d/%d/%d rows, tables have %d and %d: %w",
			len(r.Owned), len(r.PrimaryInner), len(r.SecondaryInner), n1, secondary.Len(), ErrBadOptions)
	}
	// Union-find over primaries (0..n1-1) and secondaries (n1+j), built
	// lazily: only rows that take part in a pair get an entry.
	parent := map[int32]int32{}
	var find func(x int32) int32
	find = func(x int32) int32 {
		p, ok := parent[x]
		if !ok || p == x {
			return x
		}
		root := find(p)
		parent[x] = root
		return root
	}
	union := func(a, b int32) {
		ra, rb := find(a), find(b)
		if ra != rb {
			parent[ra] = rb
		}
	}
	for _, ps := range c.batches {
		for k := range ps {
			union(ps[k].i, int32(n1)+ps[k].j)
		}
	}
	inner := func(x int32) bool {
		if int(x) < n1 {
			return r.PrimaryInner[x]
		}
		return r.SecondaryInner[int(x)-n1]
	}
	bad := map[int32]bool{} // component root -> holds a row that is not inner
	for x := range parent {
		if !inner(x) {
			bad[find(x)] = true
		}
	}
	if len(bad) == 0 {
		return nil
	}
	var ids []string
	count := 0
	for x := range parent {
		if int(x) < n1 && r.Owned[x] && bad[find(x)] {
			count++
			if len(ids) < maxReported {
				ids = append(ids, primary.IDs[x])
			}
		}
	}
	if count == 0 {
		return nil
	}
	return fmt.Errorf("match %s with %s: %d owned stars (e.g. %s) are joined by candidate pairs to rows near the edge of the tile's margin, where the tile may lack their rivals; split again with a wider margin: %w",
		primary.Name, secondary.Name, count, strings.Join(ids, ", "), ErrRegionReach)
}

// Reach is what splitting catalogs into sky tiles needs from a match of
// the whole catalogs, without matching them.
type Reach struct {
	// Prior is the P0 Match would estimate for the whole catalogs.
	Prior float64
	// SearchArcsec bounds the separation of any candidate pair, at the
	// secondary epoch.
	SearchArcsec float64
	// ShiftArcsec is the largest distance a primary row moves from its
	// own epoch to the secondary's.
	ShiftArcsec float64
}

// ReachArcsec bounds the separation between a primary row at its own epoch
// and any secondary row that can be its candidate.
func (r Reach) ReachArcsec() float64 { return r.SearchArcsec + r.ShiftArcsec }

// Survey computes the Reach of matching primary with secondary under opt:
// the same validation, propagation and prior as Match, no index and no
// search.
func Survey(ctx context.Context, primary, secondary *catalog.Table, opt Options) (*Reach, error) {
	if err := opt.normalize(); err != nil {
		return nil, err
	}
	if err := checkTable(primary); err != nil {
		return nil, err
	}
	if err := checkTable(secondary); err != nil {
		return nil, err
	}
	p, err := prepare(ctx, primary, secondary.EpochJyr, true, opt.PrimaryPosErrMas, opt.Workers)
	if err != nil {
		return nil, err
	}
	s, err := prepare(ctx, secondary, secondary.EpochJyr, false, opt.SecondaryPosErrMas, opt.Workers)
	if err != nil {
		return nil, err
	}
	r := &Reach{}
	r.Prior, _, _, _, _ = overlapPrior(p.cells, s.cells)
	if opt.NSigma > 0 {
		r.SearchArcsec = max(opt.NSigma*math.Hypot(p.maxSigmaRad, s.maxSigmaRad), opt.RadiusFloorArcsec*units.RadPerArcsec) / units.RadPerArcsec
	} else {
		r.SearchArcsec = opt.RadiusArcsec
	}
	ra, dec := primary.Cols[catalog.RA], primary.Cols[catalog.Dec]
	n := primary.Len()
	shifts := make([]float64, (n+batchRows-1)/batchRows)
	if err := parallel.Batches(ctx, n, batchRows, opt.Workers, func(_ *struct{}, lo, hi int) {
		m := 0.0
		for i := lo; i < hi; i++ {
			q := p.pts[i]
			if math.IsNaN(q.raDeg) {
				continue
			}
			m = max(m, sky.Separation(normRA(ra[i])*units.RadPerDeg, dec[i]*units.RadPerDeg, q.raDeg*units.RadPerDeg, q.decDeg*units.RadPerDeg))
		}
		shifts[lo/batchRows] = m
	}, nil); err != nil {
		return nil, err
	}
	for _, m := range shifts {
		r.ShiftArcsec = max(r.ShiftArcsec, m/units.RadPerArcsec)
	}
	return r, nil
}
