package crossmatch

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"

	"github.com/tidwall/rtree"

	"starvet/crossmatch/sky"
)

const (
	degPerRad = 180 / math.Pi
	radPerDeg = math.Pi / 180
	arcsecPerDeg = 3600
	masPerArcsec = 1000
	radPerArcsec = radPerDeg / arcsecPerDeg
	radPerMas    = radPerArcsec / masPerArcsec

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
// every hit of the rtree box search is confirmed with sky.Separation.
type Index struct {
	zones   [numZones]*rtree.RTreeGN[float64, int32]
	raRad   []float64
	decRad  []float64
	indexed int
}

// Neighbor is one row found by Index.Within.
type Neighbor struct {
	Row    int32
	SepRad float64 // angular separation from the query direction, radians
}

// NewIndex indexes rows whose ra and dec (degrees) are both finite; rows with
// a NaN coordinate are left out (Indexed reports how many went in). ra may be
// any finite angle (it is reduced to [0, 360)); dec must lie in [-90, 90]
// or NewIndex fails naming the row. Zones are built by up to workers
// goroutines (workers <= 0 means runtime.GOMAXPROCS(0)).
func NewIndex(ctx context.Context, raDeg, decDeg []float64, workers int) (*Index, error) {
	if len(raDeg) != len(decDeg) {
		panic("crossmatch: NewIndex with ra and dec of different lengths")
	}
	if len(raDeg) > math.MaxInt32 {
		return nil, fmt.Errorf("index: %d rows exceed the int32 row limit", len(raDeg))
	}
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	n := len(raDeg)
	ix := &Index{raRad: make([]float64, n), decRad: make([]float64, n)}
	ras := make([]float64, n) // reduced ra, degrees
	zoneOfRow := make([]int32, n)
	var counts [numZones + 1]int
	for i := 0; i < n; i++ {
		ra, dec := raDeg[i], decDeg[i]
		if math.IsNaN(ra) || math.IsNaN(dec) {
			zoneOfRow[i] = -1
			ix.raRad[i], ix.decRad[i] = math.NaN(), math.NaN()
			continue
		}
		if math.IsInf(ra, 0) || !(dec >= -90 && dec <= 90) {
			return nil, fmt.Errorf("index: row %d: position (%g, %g) deg: %w", i, ra, dec, ErrBadPosition)
		}
		ra = normRA(ra)
		ras[i] = ra
		ix.raRad[i], ix.decRad[i] = ra*radPerDeg, dec*radPerDeg
		z := zoneOf(dec)
		zoneOfRow[i] = int32(z)
		counts[z+1]++
	}
	for z := 1; z <= numZones; z++ {
		counts[z] += counts[z-1]
	}
	ix.indexed = counts[numZones]
	rows := make([]int32, ix.indexed)
	fill := counts
	for i, z := range zoneOfRow {
		if z >= 0 {
			rows[fill[z]] = int32(i)
			fill[z]++
		}
	}

	var next atomic.Int64
	var wg sync.WaitGroup
	var ctxErr atomic.Value
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				z := int(next.Add(1) - 1)
				if z >= numZones {
					return
				}
				if err := ctx.Err(); err != nil {
					ctxErr.Store(err)
					return
				}
				zr := rows[counts[z]:counts[z+1]]
				if len(zr) == 0 {
					continue
				}
				// Inserting in ra order keeps the tree's nodes compact and
				// the insert path cache-warm.
				slices.SortFunc(zr, func(a, b int32) int {
					if c := cmpFloat(ras[a], ras[b]); c != 0 {
						return c
					}
					return int(a - b)
				})
				tr := new(rtree.RTreeGN[float64, int32])
				for _, r := range zr {
					p := [2]float64{ras[r], decDeg[r]}
					tr.Insert(p, p, r)
				}
				ix.zones[z] = tr
			}
		}()
	}
	wg.Wait()
	if err, ok := ctxErr.Load().(error); ok {
		return nil, err
	}
	return ix, nil
}

// Len is the number of rows the index was built from; Indexed the number
// that had a position and went into the index.
func (ix *Index) Len() int     { return len(ix.raRad) }
func (ix *Index) Indexed() int { return ix.indexed }

// Within appends to dst every indexed row whose separation from (raDeg,
// decDeg) is at most radiusDeg, in ascending row order, and returns it.
// It is safe for concurrent use.
func (ix *Index) Within(raDeg, decDeg, radiusDeg float64, dst []Neighbor) []Neighbor {
	start := len(dst)
	if math.IsNaN(raDeg) || math.IsNaN(decDeg) || !(radiusDeg >= 0) {
		return dst
	}
	ra0, dec0 := normRA(raDeg)*radPerDeg, decDeg*radPerDeg
	radiusRad := radiusDeg * radPerDeg
	ix.searchBoxes(normRA(raDeg), decDeg, radiusDeg, func(r int32) {
		sep := sky.Separation(ra0, dec0, ix.raRad[r], ix.decRad[r])
		if sep <= radiusRad {
			dst = append(dst, Neighbor{Row: r, SepRad: sep})
		}
	})
	found := dst[start:]
	if len(found) > 1 {
		slices.SortFunc(found, func(a, b Neighbor) int { return int(a.Row - b.Row) })
	}
	return dst
}

// searchBoxes calls fn for every indexed row inside the (ra, dec) boxes that
// enclose the cap of radius radiusDeg around (raDeg in [0,360), decDeg). A
// row is reported once: zones do not overlap and the RA pieces are disjoint.
func (ix *Index) searchBoxes(raDeg, decDeg, radiusDeg float64, fn func(int32)) {
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
		// practice; it encloses the exact half-width asin(sin r / cos dec)).
		ext := math.Max(math.Abs(decLo), math.Abs(decHi))
		hw := r/math.Cos(ext*radPerDeg) + boxPadDeg
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
	iter := func(_, _ [2]float64, row int32) bool {
		fn(row)
		return true
	}
	for z := zoneOf(decLo); z <= zoneOf(decHi); z++ {
		tr := ix.zones[z]
		if tr == nil {
			continue
		}
		for b := 0; b < nb; b++ {
			tr.Search([2]float64{boxes[b][0], decLo}, [2]float64{boxes[b][1], decHi}, iter)
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
