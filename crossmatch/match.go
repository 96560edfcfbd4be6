package crossmatch

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"sync/atomic"

	"starvet/catalog"
	"starvet/internal/parallel"
	"starvet/internal/units"
)

// Sentinel errors; returned errors wrap them (use errors.Is).
var (
	// ErrBadPosition: a position is out of range or not finite.
	ErrBadPosition = errors.New("bad position")
	// ErrNoPositionError: a row has no usable positional error and its
	// catalog has no fallback.
	ErrNoPositionError = errors.New("no positional error")
	// ErrBadOptions: an option is out of range.
	ErrBadOptions = errors.New("bad match options")
	// ErrNoColumn: a catalog lacks the ra or dec column.
	ErrNoColumn = errors.New("missing column")
	// ErrRegionReach: in a sky tile, the match of an owned primary
	// depends on rows the tile may not hold.
	ErrRegionReach = errors.New("match reaches past the tile's margin")
)

// Defaults applied by Match to zero options.
const (
	DefaultRadiusArcsec   = 1.0
	DefaultAmbiguityRatio = 3.0
)

// Options control Match. Zero values take the defaults noted.
type Options struct {
	// RadiusArcsec is the fixed match radius (default 1.0); ignored when
	// NSigma > 0.
	RadiusArcsec float64
	// NSigma > 0 switches to per-pair radii NSigma * sqrt(s1^2 + s2^2),
	// never below RadiusFloorArcsec.
	NSigma            float64
	RadiusFloorArcsec float64
	// AmbiguityRatio (default 3, must be >= 1): see Match.
	AmbiguityRatio float64
	// PrimaryPosErrMas and SecondaryPosErrMas are the circular positional
	// errors used for rows that have none of their own (0: no fallback, such
	// rows are an error).
	PrimaryPosErrMas, SecondaryPosErrMas float64
	// Workers is the number of goroutines (parallel.Workers: <= 0 means
	// GOMAXPROCS).
	Workers int
	// Prior, when > 0, is the prior P0 used instead of the estimate from
	// these two tables' overlap: a sky tile holds part of each catalog and
	// takes the value Reach found for the whole of both.
	Prior float64
	// Region, when set, marks the tables as a sky tile's part of larger
	// catalogs; Match then fails (ErrRegionReach) rather than decide the
	// match of an owned primary from an incomplete neighbourhood.
	Region *Region
}

// Counterpart is the outcome for one primary row. (It would be called Match
// but that name is the function.)
type Counterpart struct {
	Secondary     int32  // row in the secondary table, -1 for none
	CounterpartID string // secondary IDs[Secondary], "" for none
	SepArcsec     float64
	Prob          float64 // posterior match probability; 0 for none
	BayesFactor   float64 // may underflow to 0 for a pair many sigma apart
	Candidates    int32   // secondary rows within the radius, before resolution
	Ambiguous     bool
}

// Stats count what Match did, so that no row is dropped unnoticed.
type Stats struct {
	PrimaryRows, SecondaryRows int
	// Rows with a missing ra or dec: never matched.
	PrimaryNoPosition, SecondaryNoPosition int
	// Primary rows moved to the secondary epoch; rows without a proper
	// motion stay where they are (counted in NotPropagated).
	Propagated, NotPropagated int
	// Rows that used the catalog's fallback positional error.
	PrimaryFallbackErr, SecondaryFallbackErr int
	// Largest search radius used.
	MaxSearchRadiusArcsec float64
	// Overlap estimate: occupied cells shared by both catalogs and the
	// number of rows of each catalog in them.
	OverlapCells, PrimaryInOverlap, SecondaryInOverlap int
	CandidatePairs                                     int // all (primary, secondary) pairs within the radius
	Matched                                            int
	Ambiguous                                          int
	// Primaries whose best candidate went to another primary.
	BestTaken int
}

// Result holds one Counterpart per primary row plus catalog-level numbers.
type Result struct {
	Matches      []Counterpart
	Prior        float64 // P0
	OverlapSqDeg float64
	Stats        Stats
}

// batchRows is the number of primary rows a worker takes at once; ctx is
// checked between batches.
const batchRows = 4096

// pair is one candidate (primary i, secondary j).
type pair struct {
	i, j   int32 // primary row, secondary row
	pos    int32 // secondary's position in the index
	nc     int32 // number of candidates of primary i
	sepRad float64
	lnB    float64
}

// Match cross-matches primary against secondary and returns one Counterpart per
// primary row (see the package documentation for the full specification).
//
// Every primary position is first moved from primary.EpochJyr to
// secondary.EpochJyr. Candidates are secondary rows within the radius.
// Resolution is global greedy: all candidate pairs sorted by posterior
// descending (we sort by ln B, which orders identically because the prior
// is common to all pairs and P is strictly increasing in B, but does not
// saturate at P = 1 in floating point), ties by primary row then secondary
// row; a pair is accepted when neither its primary nor its secondary is
// taken yet.
//
// A primary i with best candidate j (largest B, ties to the lower row) is
// Ambiguous when either
//   - another candidate j' of i has B(i,j') >= B(i,j) / AmbiguityRatio, or
//   - another primary k also has j as a candidate and B(i,j) and B(k,j)
//     are within a factor AmbiguityRatio of each other (this marks both the
//     primary that got j and the one that lost it).
func Match(ctx context.Context, primary, secondary *catalog.Table, opt Options) (*Result, error) {
	if err := opt.normalize(); err != nil {
		return nil, err
	}
	res, c, err := findCandidates(ctx, primary, secondary, &opt)
	if err != nil {
		return nil, err
	}
	if opt.Region != nil {
		if err := opt.Region.check(primary, secondary, c); err != nil {
			return nil, err
		}
	}
	res.Matches, err = resolve(ctx, c.batches, c.order, primary.Len(), c.nPos, secondary.IDs, &opt, res.Prior, &res.Stats)
	if err != nil {
		return nil, err
	}
	for i, k := range c.keys { // rows without a position are not in order
		if k < 0 {
			res.Matches[i] = noMatch()
		}
	}
	return res, nil
}

// candidateSet is what resolve needs from the search.
type candidateSet struct {
	batches [][]pair // see searchAll
	order   []int32  // primary rows in query order
	keys    []int32  // primary spatial keys (-1: no position)
	nPos    int      // secondary rows in the index
}

// findCandidates validates, propagates, builds the index, estimates the
// prior and finds every candidate pair; opt is normalised.
func findCandidates(ctx context.Context, primary, secondary *catalog.Table, opt *Options) (*Result, *candidateSet, error) {
	if err := checkTable(primary); err != nil {
		return nil, nil, err
	}
	if err := checkTable(secondary); err != nil {
		return nil, nil, err
	}
	if primary.Len() > math.MaxInt32 || secondary.Len() > math.MaxInt32 {
		return nil, nil, fmt.Errorf("match: more than %d rows", math.MaxInt32)
	}
	res := &Result{}
	st := &res.Stats
	st.PrimaryRows, st.SecondaryRows = primary.Len(), secondary.Len()

	p, err := prepare(ctx, primary, secondary.EpochJyr, true, opt.PrimaryPosErrMas, opt.Workers)
	if err != nil {
		return nil, nil, err
	}
	s, err := prepare(ctx, secondary, secondary.EpochJyr, false, opt.SecondaryPosErrMas, opt.Workers)
	if err != nil {
		return nil, nil, err
	}
	st.PrimaryNoPosition, st.SecondaryNoPosition = p.noPos, s.noPos
	st.Propagated, st.NotPropagated = p.propagated, p.notPropagated
	st.PrimaryFallbackErr, st.SecondaryFallbackErr = p.fallback, s.fallback

	// The query order and the prior do not need the index: compute them
	// while it is built.
	var order []int32
	var nc, n1, n2 int
	done := make(chan struct{})
	go func() {
		defer close(done)
		order, _ = spatialOrder(p.keys)
		res.Prior, res.OverlapSqDeg, nc, n1, n2 = overlapPrior(p.cells, s.cells)
		if opt.Prior > 0 {
			res.Prior = opt.Prior
		}
	}()
	ix, err := newIndex(ctx, s.pos, s.keys, opt.Workers)
	<-done
	if err != nil {
		return nil, nil, fmt.Errorf("match: catalog %q: %w", secondary.Name, err)
	}
	st.OverlapCells, st.PrimaryInOverlap, st.SecondaryInOverlap = nc, n1, n2

	batches, maxR, err := searchAll(ctx, ix, order, p, s, opt)
	if err != nil {
		return nil, nil, err
	}
	for _, ps := range batches {
		st.CandidatePairs += len(ps)
	}
	st.MaxSearchRadiusArcsec = maxR / units.RadPerArcsec

	return res, &candidateSet{batches: batches, order: order, keys: p.keys, nPos: ix.Indexed()}, nil
}

func (o *Options) normalize() error {
	bad := func(name string, v float64) error {
		return fmt.Errorf("match: option %s = %g: %w", name, v, ErrBadOptions)
	}
	for _, f := range []struct {
		name string
		v    float64
	}{{"radius", o.RadiusArcsec}, {"nsigma", o.NSigma}, {"radius floor", o.RadiusFloorArcsec},
		{"ambiguity ratio", o.AmbiguityRatio}, {"primary position error", o.PrimaryPosErrMas},
		{"secondary position error", o.SecondaryPosErrMas}, {"prior", o.Prior}} {
		if !(f.v >= 0) || math.IsInf(f.v, 0) {
			return bad(f.name, f.v)
		}
	}
	if o.RadiusArcsec == 0 {
		o.RadiusArcsec = DefaultRadiusArcsec
	}
	if o.AmbiguityRatio == 0 {
		o.AmbiguityRatio = DefaultAmbiguityRatio
	}
	if o.AmbiguityRatio < 1 {
		return bad("ambiguity ratio", o.AmbiguityRatio)
	}
	if o.Prior > 1 {
		return bad("prior", o.Prior)
	}
	o.Workers = parallel.Workers(o.Workers)
	return nil
}

func checkTable(t *catalog.Table) error {
	for _, f := range []catalog.Field{catalog.RA, catalog.Dec} {
		if t.Cols[f] == nil {
			return fmt.Errorf("match: catalog %q: no %s column: %w", t.Name, catalog.Fields[f].Name, ErrNoColumn)
		}
		if len(t.Cols[f]) != t.Len() {
			panic(fmt.Sprintf("crossmatch: catalog %q: column %s has %d rows, IDs %d",
				t.Name, catalog.Fields[f].Name, len(t.Cols[f]), t.Len()))
		}
	}
	if math.IsNaN(t.EpochJyr) || math.IsInf(t.EpochJyr, 0) {
		return fmt.Errorf("match: catalog %q: epoch %g: %w", t.Name, t.EpochJyr, ErrBadOptions)
	}
	return nil
}

// side is one catalog made ready for matching.
type side struct {
	pts           []query // at the secondary epoch; NaN ra for no position
	keys          []int32 // spatialKey of pts
	cells         []uint16
	maxSigmaRad   float64
	noPos         int
	propagated    int
	notPropagated int
	fallback      int
}

// query is one row's position (deg) and circular positional error (rad).
type query struct{ raDeg, decDeg, sigmaRad float64 }

func (sd *side) pos(i int) (float64, float64) { return sd.pts[i].raDeg, sd.pts[i].decDeg }

// rowErr names a row's source line (or row number when lines are unknown).
func rowErr(op string, t *catalog.Table, i int, field catalog.Field, sentinel error, format string, args ...any) error {
	where := fmt.Sprintf("row %d", i+1)
	if i < len(t.Lines) && t.Lines[i] > 0 {
		where = fmt.Sprintf("line %d", t.Lines[i])
	}
	return fmt.Errorf("%s: catalog %q: %s: column %s: %s: %w", op, t.Name, where,
		catalog.Fields[field].Name, fmt.Sprintf(format, args...), sentinel)
}

// col returns t's column f, or nil.
func col(t *catalog.Table, f catalog.Field) []float64 { return t.Cols[f] }

func at(c []float64, i int) float64 {
	if c == nil {
		return math.NaN()
	}
	return c[i]
}

// rms returns sqrt(mean of squares) of the usable (finite, > 0) values and
// whether there was one.
func rms(a, b float64) (float64, bool) {
	okA, okB := a > 0 && !math.IsInf(a, 0), b > 0 && !math.IsInf(b, 0)
	switch {
	case okA && okB:
		return math.Sqrt((a*a + b*b) / 2), true
	case okA:
		return a, true
	case okB:
		return b, true
	}
	return 0, false
}

// prepare validates positions, propagates (primary only) and computes the
// per-row circular positional error:
// sigma^2 = (ra_err^2 + dec_err^2)/2 + ((pm_ra_err^2 + pm_dec_err^2)/2) dt^2
// (mas), the first term replaced by the fallback when the row has no
// position errors. One pass per row does all of it: the loop is hot (every
// row of both catalogs) and stops at a row's first error.
func prepare(ctx context.Context, t *catalog.Table, toJyr float64, move bool, fallbackMas float64, workers int) (*side, error) {
	n := t.Len()
	sd := &side{
		pts: make([]query, n), cells: make([]uint16, n), keys: make([]int32, n),
	}
	ra, dec := col(t, catalog.RA), col(t, catalog.Dec)
	raErr, decErr := col(t, catalog.RAErr), col(t, catalog.DecErr)
	pmRA, pmDec := col(t, catalog.PMRA), col(t, catalog.PMDec)
	pmRAErr, pmDecErr := col(t, catalog.PMRAErr), col(t, catalog.PMDecErr)
	plx, rv := col(t, catalog.Parallax), col(t, catalog.RV)
	absDt := math.Abs(toJyr - t.EpochJyr)

	type tally struct {
		noPos, moved, still, fallback int
		maxSigma                      float64
		err                           error
		errRow                        int
	}
	tallies := make([]tally, (n+batchRows-1)/batchRows)
	err := parallel.Batches(ctx, n, batchRows, workers, func(_ *struct{}, lo, hi int) {
		tl := &tallies[lo/batchRows]
		tl.errRow = -1
		for i := lo; i < hi; i++ {
			r, d := ra[i], dec[i]
			if math.IsNaN(r) || math.IsNaN(d) {
				tl.noPos++
				sd.pts[i] = query{math.NaN(), math.NaN(), math.NaN()}
				sd.cells[i] = noCell
				sd.keys[i] = -1
				continue
			}
			if math.IsInf(r, 0) {
				tl.err = rowErr("match", t, i, catalog.RA, ErrBadPosition, "value %g", r)
				return
			}
			if !(d >= -90 && d <= 90) {
				tl.err = rowErr("match", t, i, catalog.Dec, ErrBadPosition, "value %g outside [-90, 90]", d)
				return
			}
			r = normRA(r)
			sigMas, ok := rms(at(raErr, i), at(decErr, i))
			if !ok {
				if fallbackMas <= 0 {
					tl.err = rowErr("match", t, i, catalog.RAErr, ErrNoPositionError, "no ra_err/dec_err and no fallback positional error")
					return
				}
				sigMas = fallbackMas
				tl.fallback++
			}
			if move {
				var moved bool
				r, d, moved = propagate(astrometry{
					RADeg: r, DecDeg: d, ParallaxMas: at(plx, i),
					PMRAMasYr: at(pmRA, i), PMDecMasYr: at(pmDec, i), RVKms: at(rv, i),
				}, t.EpochJyr, toJyr)
				if moved {
					tl.moved++
				} else {
					tl.still++
				}
				if pmSig, ok := rms(at(pmRAErr, i), at(pmDecErr, i)); ok && moved {
					sigMas = math.Hypot(sigMas, pmSig*absDt)
				}
			}
			sig := sigMas * units.RadPerMas
			sd.pts[i] = query{r, d, sig}
			tl.maxSigma = max(tl.maxSigma, sig)
			sd.cells[i] = cellOf(r, d)
			sd.keys[i] = spatialKey(r, d)
		}
	}, nil)
	if err != nil {
		return nil, err
	}
	for _, tl := range tallies { // first error in row order
		if tl.err != nil {
			return nil, tl.err
		}
		sd.noPos += tl.noPos
		sd.propagated += tl.moved
		sd.notPropagated += tl.still
		sd.fallback += tl.fallback
		sd.maxSigmaRad = max(sd.maxSigmaRad, tl.maxSigma)
	}
	return sd, nil
}

// searchAll finds every candidate pair. Queries run in spatial order (for
// cache locality), in batches of batchRows; batch b holds the pairs of the
// primaries order[b*batchRows:(b+1)*batchRows], each primary's pairs
// contiguous and ordered by secondary row. Nothing depends on the worker
// count.
func searchAll(ctx context.Context, ix *Index, order []int32, p, s *side, opt *Options) ([][]pair, float64, error) {
	// Secondary errors in index order, read near-sequentially below.
	sigByPos := make([]float64, ix.Indexed())
	if err := parallel.Batches(ctx, len(sigByPos), batchRows, opt.Workers, func(_ *struct{}, lo, hi int) {
		for k := lo; k < hi; k++ {
			sigByPos[k] = s.pts[ix.row[k]].sigmaRad
		}
	}, nil); err != nil {
		return nil, 0, err
	}
	nb := (len(order) + batchRows - 1) / batchRows
	out := make([][]pair, nb)
	maxR := make([]float64, nb)
	fixedRad := opt.RadiusArcsec * units.RadPerArcsec
	floorRad := opt.RadiusFloorArcsec * units.RadPerArcsec
	err := parallel.Batches(ctx, len(order), batchRows, opt.Workers, func(_ *struct{}, lo, hi int) {
		b, rows := lo/batchRows, order[lo:hi]
		// Gather the batch's queries first: independent loads overlap
		// their cache misses, the search loop then reads sequentially.
		var qs [batchRows]query
		for k, i := range rows {
			qs[k] = p.pts[i]
		}
		var hits []hit
		ps := make([]pair, 0, len(rows)+len(rows)/4)
		for k, i := range rows {
			q := qs[k]
			s1 := q.sigmaRad
			rSearch := fixedRad
			if opt.NSigma > 0 {
				rSearch = max(opt.NSigma*math.Hypot(s1, s.maxSigmaRad), floorRad)
			}
			maxR[b] = max(maxR[b], rSearch)
			hits = ix.within(q.raDeg, q.decDeg, rSearch*units.DegPerRad, hits[:0])
			first := len(ps)
			for _, h := range hits {
				s2 := sigByPos[h.pos]
				if opt.NSigma > 0 && h.sepRad > max(opt.NSigma*math.Hypot(s1, s2), floorRad) {
					continue
				}
				ps = append(ps, pair{i: i, j: ix.row[h.pos], pos: h.pos, sepRad: h.sepRad, lnB: LogBayesFactor(h.sepRad, s1, s2)})
			}
			mine := ps[first:]
			if len(mine) > 1 {
				slices.SortFunc(mine, func(a, b pair) int { return int(a.j - b.j) })
			}
			for k := range mine {
				mine[k].nc = int32(len(mine))
			}
		}
		out[b] = ps
	}, nil)
	if err != nil {
		return nil, 0, err
	}
	return out, slices.Max(append(maxR, 0)), nil
}

// pairRef locates a pair: batch and index in it.
type pairRef struct{ b, k int32 }

// resolve applies the one-to-one greedy and the ambiguity rule (see Match).
// Each primary's pairs are contiguous in one batch; nPos is the number of
// index positions (pair.pos is below it). No decision depends on the order
// of the pairs.
func resolve(ctx context.Context, batches [][]pair, order []int32, n1, nPos int, ids []string, opt *Options, p0 float64, st *Stats) ([]Counterpart, error) {
	rs := &resolution{batches: batches}
	var err error
	if rs.secCount, err = countPerSecondary(ctx, batches, nPos, opt.Workers); err != nil {
		return nil, err
	}
	hard, err := rs.contested(ctx, opt.Workers)
	if err != nil {
		return nil, err
	}
	rs.secPairs = rs.sharedSecondaries(hard)
	rs.won = greedy(hard)
	out := make([]Counterpart, n1)
	if err := rs.counterparts(ctx, order, out, ids, opt, newPosterior(p0), st); err != nil {
		return nil, err
	}
	return out, nil
}

// resolution is what resolve knows about the candidate pairs.
type resolution struct {
	batches  [][]pair
	secCount []int32             // primaries per secondary, by index position
	secPairs map[int32][]pairRef // pairs of each secondary several primaries share
	won      map[int32]pairRef   // primary -> pair accepted by the greedy
}

// hardPair is a pair that is not alone in its connected component of the
// candidate graph.
type hardPair struct {
	lnB  float64
	i, j int32
	ref  pairRef
}

// countPerSecondary counts the primaries of each secondary, by index
// position.
func countPerSecondary(ctx context.Context, batches [][]pair, nPos, workers int) ([]int32, error) {
	secCount := make([]int32, nPos)
	if err := parallel.Batches(ctx, len(batches), 1, workers, func(_ *struct{}, b, _ int) {
		for k := range batches[b] {
			atomic.AddInt32(&secCount[batches[b][k].pos], 1)
		}
	}, nil); err != nil {
		return nil, err
	}
	return secCount, nil
}

// contested returns the hard pairs. A pair alone in its connected
// component of the candidate graph is accepted directly (counterparts);
// the greedy over the rest gives the same result as the greedy over all
// pairs, because a pair's fate depends only on the pairs sharing its
// primary or secondary.
func (rs *resolution) contested(ctx context.Context, workers int) ([]hardPair, error) {
	batches, secCount := rs.batches, rs.secCount
	hardOf := make([][]hardPair, len(batches))
	if err := parallel.Batches(ctx, len(batches), 1, workers, func(_ *struct{}, b, _ int) {
		ps := batches[b]
		for k := range ps {
			if pr := &ps[k]; pr.nc > 1 || secCount[pr.pos] > 1 {
				hardOf[b] = append(hardOf[b], hardPair{pr.lnB, pr.i, pr.j, pairRef{int32(b), int32(k)}})
			}
		}
	}, nil); err != nil {
		return nil, err
	}
	return slices.Concat(hardOf...), nil
}

// sharedSecondaries returns the pairs of the secondaries that several
// primaries share (rare outside crowded fields), by index position; nil
// when there are none.
func (rs *resolution) sharedSecondaries(hard []hardPair) map[int32][]pairRef {
	shared := slices.ContainsFunc(hard, func(h hardPair) bool {
		return rs.secCount[rs.batches[h.ref.b][h.ref.k].pos] > 1
	})
	if !shared {
		return nil
	}
	secPairs := make(map[int32][]pairRef)
	for _, h := range hard {
		pr := &rs.batches[h.ref.b][h.ref.k]
		if rs.secCount[pr.pos] > 1 {
			secPairs[pr.pos] = append(secPairs[pr.pos], h.ref)
		}
	}
	return secPairs
}

// greedy sorts hard by ln B descending, ties by primary then secondary
// row, and accepts each pair whose primary and secondary are both free.
// It returns the accepted pair of each primary.
func greedy(hard []hardPair) map[int32]pairRef {
	slices.SortFunc(hard, func(a, b hardPair) int {
		switch {
		case a.lnB > b.lnB:
			return -1
		case a.lnB < b.lnB:
			return 1
		case a.i != b.i:
			return int(a.i - b.i)
		}
		return int(a.j - b.j)
	})
	takenSec := make(map[int32]bool)
	won := make(map[int32]pairRef)
	for _, h := range hard {
		if _, ok := won[h.i]; ok || takenSec[h.j] {
			continue
		}
		won[h.i] = h.ref
		takenSec[h.j] = true
	}
	return won
}

// counterparts writes the whole Counterpart of every primary in order
// into out, once, per primary in batch order (its contiguous run of pairs
// in one batch), and adds the counts to st. The per-primary loop stays
// inline: it runs once per primary row, the hot end of resolve.
func (rs *resolution) counterparts(ctx context.Context, order []int32, out []Counterpart, ids []string, opt *Options, post posterior, st *Stats) error {
	batches, secCount, secPairs, won := rs.batches, rs.secCount, rs.secPairs, rs.won
	nSec := func(pos int32) int32 { return secCount[pos] }
	lnRatio := math.Log(opt.AmbiguityRatio)
	none := noMatch()
	type tally struct{ matched, ambiguous, bestTaken int }
	tallies := make([]tally, len(batches))
	err := parallel.Batches(ctx, len(batches), 1, opt.Workers, func(_ *struct{}, b, _ int) {
		pairs := batches[b]
		tl := &tallies[b]
		start := 0
		for _, i := range order[b*batchRows : min(len(order), (b+1)*batchRows)] {
			m := &out[i]
			*m = none
			if start == len(pairs) || pairs[start].i != i {
				continue // no candidates
			}
			end := start + int(pairs[start].nc)
			m.Candidates = pairs[start].nc
			if first := &pairs[start]; first.nc == 1 && nSec(first.pos) == 1 {
				accept(m, first, post, ids) // alone in its component
			} else if r, ok := won[i]; ok {
				accept(m, &batches[r.b][r.k], post, ids)
			}
			best := start
			for k := start + 1; k < end; k++ {
				if pairs[k].lnB > pairs[best].lnB {
					best = k
				}
			}
			bp := &pairs[best]
			amb := false
			for k := start; k < end && !amb; k++ {
				amb = k != best && pairs[k].lnB >= bp.lnB-lnRatio
			}
			if nSec(bp.pos) > 1 {
				for _, r := range secPairs[bp.pos] {
					if o := &batches[r.b][r.k]; o.i != i && math.Abs(o.lnB-bp.lnB) <= lnRatio {
						amb = true
					}
				}
			}
			m.Ambiguous = amb
			if m.Secondary != bp.j {
				tl.bestTaken++
			}
			if amb {
				tl.ambiguous++
			}
			if m.Secondary >= 0 {
				tl.matched++
			}
			start = end
		}
	}, nil)
	if err != nil {
		return err
	}
	for _, tl := range tallies {
		st.Matched += tl.matched
		st.Ambiguous += tl.ambiguous
		st.BestTaken += tl.bestTaken
	}
	return nil
}

// noMatch is the Counterpart of a primary without a match.
func noMatch() Counterpart {
	return Counterpart{Secondary: -1, SepArcsec: math.NaN(), BayesFactor: math.NaN()}
}

func accept(m *Counterpart, pr *pair, post posterior, ids []string) {
	m.Secondary = pr.j
	m.CounterpartID = ids[pr.j]
	m.SepArcsec = pr.sepRad / units.RadPerArcsec
	m.BayesFactor = math.Exp(pr.lnB)
	m.Prob = post.ofB(m.BayesFactor, pr.lnB)
}
