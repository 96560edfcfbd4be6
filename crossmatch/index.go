package crossmatch

import (
	"context"
	"fmt"
	"math"
	"slices"

	"github.com/tidwall/rtree"

	"starvet/crossmatch/sky"
	"starvet/internal/parallel"
	"starvet/internal/units"
)

const (
	// zoneHeightDeg is the declination height of one index zone. Each zone
	// is its own rtree, so zones are built concurrently and a query touches
	// only the zones its cap overlaps.
	zoneHeightDeg = 0.5
	numZones      = int(180 / zoneHeightDeg)

	// boxPadDeg widens every query box to absorb rounding in the box
	// arithmetic; the exact separation test that follows removes the extra
	// hits, so the pad costs time only.
	boxPadDeg = 1e-9
)

// Index is a static sky index over a set of (ra, dec) positions in degrees.
// It answers "which rows lie within an angle of this direction", exactly:
// every candidate of the box search is confirmed with sky.Separation.
//
// Layout: the sky is cut into declination zones of zoneHeightDeg; inside a
// zone the points are ordered by ra bin (binsPerZone bins) and grouped into
// runs of runLen consecutive points. Each zone is an rtree whose items are
// the bounding boxes of its runs, so the trees are small (n/runLen items)
// and each zone is built by one goroutine. A query finds the runs whose
// boxes meet its box and scans their points.
type Index struct {
	zones    [numZones]*rtree.RTreeGN[float64, int32] // item: run number
	runStart []int32                                  // run k is points runStart[k]..runStart[k+1]-1
	pts      []point                                  // in zone, ra-bin order
	row      []int32                                  // row of each point
	n        int
}

type point struct{ raDeg, decDeg float64 }

const (
	// runLen is the number of points per rtree item.
	runLen = 16
	// binsPerZone ra bins order the points inside a zone.
	binsPerZone = 1024
)

// Neighbor is one row found by Index.Within.
type Neighbor struct {
	Row    int32
	SepRad float64 // angular separation from the query direction, radians
}

// hit is a point found by within, by its position in the index order.
type hit struct {
	pos    int32
	sepRad float64
}

// NewIndex indexes rows whose ra and dec (degrees) are both finite; rows with
// a NaN coordinate are left out (Indexed reports how many went in). ra may be
// any finite angle (it is reduced to [0, 360)); dec must lie in [-90, 90]
// or NewIndex fails naming the row. Zones are built by up to workers
// goroutines (parallel.Workers: <= 0 means GOMAXPROCS).
func NewIndex(ctx context.Context, raDeg, decDeg []float64, workers int) (*Index, error) {
	if len(raDeg) != len(decDeg) {
		panic("crossmatch: NewIndex with ra and dec of different lengths")
	}
	if len(raDeg) > math.MaxInt32 {
		return nil, fmt.Errorf("index: %d rows exceed the int32 row limit", len(raDeg))
	}
	for i := range raDeg {
		ra, dec := raDeg[i], decDeg[i]
		if !math.IsNaN(ra) && !math.IsNaN(dec) && (math.IsInf(ra, 0) || !(dec >= -90 && dec <= 90)) {
			return nil, fmt.Errorf("index: row %d: position (%g, %g) deg: %w", i, ra, dec, ErrBadPosition)
		}
	}
	keys := make([]int32, len(raDeg))
	for i := range raDeg {
		keys[i] = spatialKey(raDeg[i], decDeg[i])
	}
	return newIndex(ctx, func(i int) (float64, float64) { return raDeg[i], decDeg[i] }, keys, workers)
}

// newIndex is NewIndex for valid positions given by an accessor, with
// their spatialKey already computed (-1: left out).
func newIndex(ctx context.Context, pos func(int) (raDeg, decDeg float64), keys []int32, workers int) (*Index, error) {
	order, zoneStart := spatialOrder(keys)
	m := len(order)
	ix := &Index{pts: make([]point, m), row: order, n: len(keys)}
	if err := parallel.Batches(ctx, m, batchRows, workers, func(_ *struct{}, lo, hi int) {
		for k := lo; k < hi; k++ {
			ra, dec := pos(int(order[k]))
			ix.pts[k] = point{normRA(ra), dec}
		}
	}, nil); err != nil {
		return nil, err
	}
	// Run numbers of zone z start at runBase[z].
	var runBase [numZones + 1]int
	for z := 0; z < numZones; z++ {
		runBase[z+1] = runBase[z] + (zoneStart[z+1]-zoneStart[z]+runLen-1)/runLen
	}
	ix.runStart = make([]int32, runBase[numZones]+1)
	ix.runStart[runBase[numZones]] = int32(m)

	err := parallel.Batches(ctx, numZones, 1, workers, func(_ *struct{}, z, _ int) {
		lo, hi := zoneStart[z], zoneStart[z+1]
		if lo == hi {
			return
		}
		tr := new(rtree.RTreeGN[float64, int32])
		for run := runBase[z]; run < runBase[z+1]; run++ {
			a := lo + (run-runBase[z])*runLen
			b := min(a+runLen, hi)
			ix.runStart[run] = int32(a)
			bmin := [2]float64{ix.pts[a].raDeg, ix.pts[a].decDeg}
			bmax := bmin
			for _, q := range ix.pts[a+1 : b] {
				bmin = [2]float64{min(bmin[0], q.raDeg), min(bmin[1], q.decDeg)}
				bmax = [2]float64{max(bmax[0], q.raDeg), max(bmax[1], q.decDeg)}
			}
			tr.Insert(bmin, bmax, int32(run))
		}
		ix.zones[z] = tr
	}, nil)
	if err != nil {
		return nil, err
	}
	return ix, nil
}

// spatialKey is the sort key of a position: zone, then ra bin (binsPerZone
// per zone); -1 for a NaN coordinate. Positions must be valid otherwise.
func spatialKey(raDeg, decDeg float64) int32 {
	if math.IsNaN(raDeg) || math.IsNaN(decDeg) {
		return -1
	}
	b := min(int(normRA(raDeg)/360*binsPerZone), binsPerZone-1)
	return int32(zoneOf(decDeg)*binsPerZone + b)
}

// spatialOrder returns the rows with a key >= 0 ordered by key, then row (a
// stable counting sort), and the start of each zone in that order.
func spatialOrder(keys []int32) (order []int32, zoneStart [numZones + 1]int) {
	const nKeys = numZones * binsPerZone
	counts := make([]int32, nKeys+1)
	for _, k := range keys {
		counts[k+1]++ // k = -1 lands in counts[0], dropped below
	}
	dropped := counts[0]
	counts[0] = 0
	for k := 1; k <= nKeys; k++ {
		counts[k] += counts[k-1]
	}
	order = make([]int32, len(keys)-int(dropped))
	for z := 0; z <= numZones; z++ {
		zoneStart[z] = int(counts[z*binsPerZone])
	}
	for i, k := range keys {
		if k >= 0 {
			order[counts[k]] = int32(i)
			counts[k]++
		}
	}
	return order, zoneStart
}

// Len is the number of rows the index was built from; Indexed the number
// that had a position and went into the index.
func (ix *Index) Len() int     { return ix.n }
func (ix *Index) Indexed() int { return len(ix.row) }

// Within appends to dst every indexed row whose separation from (raDeg,
// decDeg) is at most radiusDeg, in ascending row order, and returns it.
// It is safe for concurrent use.
func (ix *Index) Within(raDeg, decDeg, radiusDeg float64, dst []Neighbor) []Neighbor {
	start := len(dst)
	var buf [16]hit
	for _, h := range ix.within(raDeg, decDeg, radiusDeg, buf[:0]) {
		dst = append(dst, Neighbor{Row: ix.row[h.pos], SepRad: h.sepRad})
	}
	found := dst[start:]
	if len(found) > 1 {
		slices.SortFunc(found, func(a, b Neighbor) int { return int(a.Row - b.Row) })
	}
	return dst
}

// within appends the points within radiusDeg of (raDeg, decDeg), in no
// particular order.
func (ix *Index) within(raDeg, decDeg, radiusDeg float64, dst []hit) []hit {
	if math.IsNaN(raDeg) || math.IsNaN(decDeg) || !(radiusDeg >= 0) {
		return dst
	}
	ra := normRA(raDeg)
	ra0, dec0 := ra*units.RadPerDeg, decDeg*units.RadPerDeg
	radiusRad := radiusDeg * units.RadPerDeg
	ix.searchBoxes(ra, decDeg, radiusDeg, func(p int) {
		q := ix.pts[p]
		sep := sky.Separation(ra0, dec0, q.raDeg*units.RadPerDeg, q.decDeg*units.RadPerDeg)
		if sep <= radiusRad {
			dst = append(dst, hit{pos: int32(p), sepRad: sep})
		}
	})
	return dst
}

// searchBoxes calls fn for every indexed point (by position) inside the
// (ra, dec) boxes that enclose the cap of radius radiusDeg around (raDeg in
// [0,360), decDeg). A point is reported once: zones do not overlap and the
// RA pieces are disjoint.
func (ix *Index) searchBoxes(raDeg, decDeg, radiusDeg float64, fn func(int)) {
	r := radiusDeg + boxPadDeg
	decLo, decHi := decDeg-r, decDeg+r
	var boxes [2][2]float64 // ra intervals
	nb := 0
	if decHi >= 90 || decLo <= -90 || r >= 90 {
		// The cap contains a pole: every RA is inside.
		boxes[0] = [2]float64{0, 360}
		nb = 1
	} else {
		// RA half-width r / cos(dec) at the cap's extreme |dec| (common
		// practice; it encloses the exact half-width asin(sin r / cos dec),
		// which the tests check).
		ext := math.Max(math.Abs(decLo), math.Abs(decHi))
		hw := r/math.Cos(ext*units.RadPerDeg) + boxPadDeg
		lo, hi := raDeg-hw, raDeg+hw
		switch {
		case hw >= 180:
			boxes[0] = [2]float64{0, 360}
			nb = 1
		case lo < 0:
			boxes[0] = [2]float64{lo + 360, 360}
			boxes[1] = [2]float64{0, hi}
			nb = 2
		case hi >= 360:
			boxes[0] = [2]float64{lo, 360}
			boxes[1] = [2]float64{0, hi - 360}
			nb = 2
		default:
			boxes[0] = [2]float64{lo, hi}
			nb = 1
		}
	}
	decLo, decHi = math.Max(decLo, -90), math.Min(decHi, 90)
	for z := zoneOf(decLo); z <= zoneOf(decHi); z++ {
		tr := ix.zones[z]
		if tr == nil {
			continue
		}
		for b := 0; b < nb; b++ {
			raLo, raHi := boxes[b][0], boxes[b][1]
			tr.Search([2]float64{raLo, decLo}, [2]float64{raHi, decHi},
				func(_, _ [2]float64, run int32) bool {
					for p := int(ix.runStart[run]); p < int(ix.runStart[run+1]); p++ {
						q := ix.pts[p]
						if q.raDeg >= raLo && q.raDeg <= raHi && q.decDeg >= decLo && q.decDeg <= decHi {
							fn(p)
						}
					}
					return true
				})
		}
	}
}

// zoneOf returns the zone holding declination dec (degrees, in [-90, 90]).
func zoneOf(decDeg float64) int {
	z := int((decDeg + 90) / zoneHeightDeg)
	return min(max(z, 0), numZones-1)
}

// normRA reduces an angle in degrees to [0, 360).
func normRA(raDeg float64) float64 {
	if raDeg >= 0 && raDeg < 360 {
		return raDeg
	}
	ra := math.Mod(raDeg, 360)
	if ra < 0 {
		ra += 360
	}
	if ra >= 360 { // -tiny + 360 rounds to 360
		ra = 0
	}
	return ra
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}
