package orbit

import (
	"context"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"starvet/galaxy/potential"
	"starvet/internal/parallel"
	"starvet/internal/vec"
)

// Origin is where a back-trace places a star's birth: one of the Origin
// constants. The words are stored as TEXT in the ledger.
type Origin string

// Origin verdicts stored in TraceResult.Origin.
const (
	// OriginGC: the Galactic Centre lies inside the GCConsistencyLevel
	// (95 per cent) region of the plane crossings.
	OriginGC Origin = "galactic-centre"
	// OriginDisk: the centre is excluded at 95 per cent and most crossings
	// fall inside DiskRadiusKpc.
	OriginDisk Origin = "disk"
	// OriginOuter: the centre is excluded and most crossings lie beyond
	// DiskRadiusKpc.
	OriginOuter Origin = "outer"
	// OriginUntraced: fewer than half of the samples cross the plane within
	// the trace time (or there are no samples).
	OriginUntraced Origin = "untraced"
)

// Defaults for TraceSettings.
const (
	DefaultTraceMyr      = 300.0
	DefaultGCRadiusKpc   = 1.0
	DefaultDiskRadiusKpc = 25.0
	// GCConsistencyLevel is the containment level of the region of the
	// plane crossings tested for the centre: a star whose GCConsistency is
	// at most this level has origin OriginGC (common practice: a 95 per
	// cent region).
	GCConsistencyLevel = 0.95
)

// TraceSettings controls Trace. Zero fields take the defaults.
type TraceSettings struct {
	TraceMyr      float64 // how far back to integrate, Myr (default 300)
	GCRadiusKpc   float64 // crossings this close to the centre count as GC origin (default 1)
	DiskRadiusKpc float64 // outer radius of the disk for the "disk" verdict (default 25)
	Options
}

func (s TraceSettings) withDefaults() TraceSettings {
	if !(s.TraceMyr > 0) {
		s.TraceMyr = DefaultTraceMyr
	}
	if !(s.GCRadiusKpc > 0) {
		s.GCRadiusKpc = DefaultGCRadiusKpc
	}
	if !(s.DiskRadiusKpc > 0) {
		s.DiskRadiusKpc = DefaultDiskRadiusKpc
	}
	s.Options = s.Options.withDefaults()
	return s
}

// Crossing is where and when a sample's back-traced orbit first crossed the
// plane z = 0: Galactocentric x, y in kpc and TMyr > 0 the time before now.
type Crossing struct {
	XKpc, YKpc, TMyr float64
}

// TraceResult summarises the back-trace of one star's samples.
type TraceResult struct {
	Samples int // number of Monte Carlo samples given
	// InvalidSamples counts samples with a non-finite position or velocity;
	// they are not integrated and count as not crossed.
	InvalidSamples int
	Crossings      []Crossing // one per sample that crossed, in sample order

	FractionCrossed float64 // crossed samples / all samples
	// PGCOrigin is the share of ALL samples whose crossing lies within
	// GCRadiusKpc of the centre.
	PGCOrigin float64
	// GCMahalanobis is the Mahalanobis distance D of the centre (0, 0) from
	// the crossings' mean under their 2x2 sample covariance. Along
	// directions where the covariance is degenerate (e.g. all samples
	// identical) an exact distance test replaces it: offsets within
	// GCRadiusKpc count as zero, larger ones make D = +Inf. NaN without
	// crossings.
	GCMahalanobis float64
	// GCConsistency is the stored figure: the containment level of the
	// ellipse through the centre, P = 1 - exp(-D^2/2) (chi-square with 2
	// degrees of freedom, Gaussian approximation). The centre lies inside the
	// 95 per cent region when P <= 0.95. NaN without crossings.
	GCConsistency float64
	Origin        Origin

	FlightTimeMyr      float64 // median crossing time over crossed samples; NaN if none
	ClosestApproachKpc float64 // median over valid samples; NaN if none
}

// TraceInput holds one star's Monte Carlo samples (Galactocentric, current
// epoch): positions in kpc, velocities in km/s, equal lengths.
type TraceInput struct {
	ID       string
	Pos, Vel [][3]float64
}

// sampleTrace is the back-trace of one sample.
type sampleTrace struct {
	crossed   bool
	cross     Crossing
	closestKp float64
}

// traceSample integrates one sample backward until its first plane
// crossing or the trace time. If the crossing lies within GCRadiusKpc of the
// centre it continues while the radius still shrinks, so that the closest
// approach of an orbit through the centre is its pericentre and not cut at
// the plane; otherwise the closest approach is over the flight from the
// crossing to now (or over the whole trace without a crossing).
func traceSample(p potential.Potential, x, v [3]float64, s *TraceSettings) sampleTrace {
	st := newStepper(p, s.Options, -1)
	cur := st.start(x, v)
	r := vec.Norm(cur.x)
	res := sampleTrace{closestKp: r}
	if cur.x[2] == 0 {
		res.crossed = true
		res.cross = Crossing{XKpc: cur.x[0], YKpc: cur.x[1], TMyr: 0}
	}
	tEnd := -s.TraceMyr / potential.TimeUnitMyr
	for {
		if res.crossed {
			if math.Hypot(res.cross.XKpc, res.cross.YKpc) > s.GCRadiusKpc {
				return res
			}
			// Going back in time r shrinks only while x.v > 0; stop at the
			// pericentre.
			if cur.x[0]*cur.v[0]+cur.x[1]*cur.v[1]+cur.x[2]*cur.v[2] <= 0 {
				return res
			}
		}
		prev := cur
		last := st.step(&cur, tEnd)
		r = vec.Norm(cur.x)
		if r < res.closestKp {
			res.closestKp = r
		}
		if !res.crossed && (cur.x[2] == 0 || (prev.x[2] < 0) != (cur.x[2] < 0)) {
			// Linear interpolation in z within the step (steps are a small
			// fraction of the dynamical time).
			f := prev.x[2] / (prev.x[2] - cur.x[2])
			res.crossed = true
			res.cross = Crossing{
				XKpc: prev.x[0] + f*(cur.x[0]-prev.x[0]),
				YKpc: prev.x[1] + f*(cur.x[1]-prev.x[1]),
				TMyr: -(prev.t + f*(cur.t-prev.t)) * potential.TimeUnitMyr,
			}
		}
		if last {
			return res
		}
	}
}

// Trace back-traces the Monte Carlo samples of one star (pos[i], vel[i]) and
// summarises where they crossed the Galactic plane. pos and vel must have
// equal lengths (programmer error otherwise).
//
// Verdict, in order: "untraced" if fewer than half of all samples crossed;
// "galactic-centre" if GCConsistency <= 0.95 (the centre lies inside the
// 95 per cent ellipse of the crossings); "disk" if more than half of the
// crossings lie within DiskRadiusKpc of the centre; otherwise "outer".
func Trace(p potential.Potential, pos, vel [][3]float64, s TraceSettings) TraceResult {
	if len(pos) != len(vel) {
		panic("orbit.Trace: pos and vel lengths differ")
	}
	s = s.withDefaults()
	n := len(pos)
	res := TraceResult{Samples: n, GCMahalanobis: math.NaN(), GCConsistency: math.NaN(),
		FlightTimeMyr: math.NaN(), ClosestApproachKpc: math.NaN(), Origin: OriginUntraced}
	if n == 0 {
		return res
	}
	closest := make([]float64, n)
	var flight []float64
	nGC, nDisk := 0, 0
	for i := range pos {
		if !vec.Finite3(pos[i]) || !vec.Finite3(vel[i]) {
			res.InvalidSamples++
			closest[i] = math.NaN()
			continue
		}
		t := traceSample(p, pos[i], vel[i], &s)
		closest[i] = t.closestKp
		if !t.crossed {
			continue
		}
		res.Crossings = append(res.Crossings, t.cross)
		flight = append(flight, t.cross.TMyr)
		R := math.Hypot(t.cross.XKpc, t.cross.YKpc)
		if R <= s.GCRadiusKpc {
			nGC++
		}
		if R <= s.DiskRadiusKpc {
			nDisk++
		}
	}
	nc := len(res.Crossings)
	res.FractionCrossed = float64(nc) / float64(n)
	res.PGCOrigin = float64(nGC) / float64(n)
	res.ClosestApproachKpc = median(dropNaN(closest))
	if nc == 0 {
		return res
	}
	res.FlightTimeMyr = median(flight)
	res.GCMahalanobis = centreDistance(res.Crossings, s.GCRadiusKpc)
	res.GCConsistency = -math.Expm1(-0.5 * res.GCMahalanobis * res.GCMahalanobis)
	switch {
	case 2*nc < n:
		res.Origin = OriginUntraced
	case res.GCConsistency <= GCConsistencyLevel:
		res.Origin = OriginGC
	case 2*nDisk > nc:
		res.Origin = OriginDisk
	default:
		res.Origin = OriginOuter
	}
	return res
}

// centreDistance returns the Mahalanobis distance of (0,0) from the
// crossings' mean under their sample covariance, handling degenerate
// directions by an exact distance test with tolerance tolKpc.
func centreDistance(cs []Crossing, tolKpc float64) float64 {
	n := len(cs)
	data := mat.NewDense(n, 2, nil)
	for i, c := range cs {
		data.Set(i, 0, c.XKpc)
		data.Set(i, 1, c.YKpc)
	}
	mx := stat.Mean(mat.Col(nil, 0, data), nil)
	my := stat.Mean(mat.Col(nil, 1, data), nil)
	cov := mat.NewSymDense(2, nil)
	if n > 1 {
		stat.CovarianceMatrix(cov, data, nil)
	}
	var eig mat.EigenSym
	if !eig.Factorize(cov, true) {
		return math.Inf(1)
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	// Variances below this are rounding noise relative to the spread or to a
	// micro-parsec; treat those directions as exact.
	floor := math.Max(1e-12*math.Max(vals[0], vals[1]), 1e-18)
	d2 := 0.0
	for k := range 2 {
		proj := -mx*vecs.At(0, k) - my*vecs.At(1, k) // (0 - mean) . e_k
		if vals[k] > floor {
			d2 += proj * proj / vals[k]
		} else if math.Abs(proj) > tolKpc {
			return math.Inf(1)
		}
	}
	return math.Sqrt(d2)
}

func dropNaN(v []float64) []float64 {
	out := v[:0]
	for _, x := range v {
		if !math.IsNaN(x) {
			out = append(out, x)
		}
	}
	return out
}

func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	m := len(s) / 2
	if len(s)%2 == 1 {
		return s[m]
	}
	return 0.5 * (s[m-1] + s[m])
}

// TraceAll traces every star with the given number of worker goroutines
// (parallel.Workers: <= 0 means GOMAXPROCS). p must be safe for concurrent
// use (potential.Model is). The context is checked between stars (batches
// of one); after cancellation the stars already started finish, the
// remaining results are left zero (Origin == "") and the caller should
// consult ctx.Err().
func TraceAll(ctx context.Context, p potential.Potential, stars []TraceInput, s TraceSettings, workers int) []TraceResult {
	out := make([]TraceResult, len(stars))
	// One star is many integrations: batches of one balance the load.
	_ = parallel.Batches(ctx, len(stars), 1, workers, func(_ *struct{}, lo, _ int) {
		out[lo] = Trace(p, stars[lo].Pos, stars[lo].Vel, s)
	}, nil)
	return out
}
