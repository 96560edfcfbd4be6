package weigh

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
	"starvet/internal/parallel"
	"starvet/internal/vec"
)

// Method 2: stars ejected from the Galactic Centre trace back to the centre
// only in the right potential (Gnedin et al. 2005, ApJ 634, 344, who use it
// for the halo's shape; Contigiani, Rossi & Marchetti 2019, MNRAS 487, 4025,
// for its mass and shape). We back-trace every Monte Carlo draw of a star
// under each grid model and score how well the draws return to the centre;
// two scores, see ScoreCrossings and ScoreEjection.

// Score selects how a star's back-traced draws are scored.
type Score int

const (
	// ScoreCrossings: the 2-D kernel density of the plane crossings at the
	// centre, bandwidth from the crossings themselves, times the crossed
	// fraction. It measures the return to the centre but, in a spherical
	// halo, not the halo's mass (see FitOrbits).
	ScoreCrossings Score = iota
	// ScoreEjection: the density of the star's measured velocity under
	// the ejection model, a radial velocity with the model's law of the
	// present speed given the position (ejectionDensity: speed law,
	// flight-time window, the caller's speed cut), averaged over the
	// draws, times the crossing density at the centre taken at its largest
	// over the grid (the star's weight as a central ejectee against the
	// background; see FitOrbits).
	ScoreEjection
)

// Defaults for OrbitOptions.
const (
	DefaultOrbitScaleMin         = 0.3
	DefaultOrbitScaleMax         = 3.0
	DefaultOrbitScaleCount       = 21
	DefaultBackgroundWeight      = 0.05
	DefaultBandwidthFloorKpc     = 0.1
	DefaultBackgroundSpeedMaxKms = 3000.0
	// CarryingDeltaLogLike: a star carries the fit when its ln L varies by
	// more than this over the grid.
	CarryingDeltaLogLike = 0.5
	// DefaultOrbitMaxRadiusKpc: ScoreEjection leaves out a star whose
	// median draw lies farther from the centre, so that no star's flight
	// comes near the far end of DefaultEjection's window, where its
	// likelihood would have a cliff: a star now faster than the caller's
	// 450 km/s was faster all along its outgoing radial path, so within
	// 100 kpc its flight is shorter than 100 kpc / 450 km/s = 217 Myr, short
	// of 250 Myr (ours). The likelihood is conditional on each star's
	// position, so a cut on position does not bias it.
	DefaultOrbitMaxRadiusKpc = 100.0
	// SelectMaxGCConsistency: a star is a candidate ejectee when under at
	// least one grid model at least half of its draws crossed the plane and
	// the centre lies inside the 99 per cent ellipse of its crossings.
	SelectMaxGCConsistency = 0.99
)

// Wilks (1938, Ann. Math. Stat. 9, 60): -2 Delta ln L of one parameter is
// chi-square with one degree of freedom; its 68.27 and 90 per cent points are
// 1 and 2.706 (common practice).
const (
	delta2LogL68 = 1.0
	delta2LogL90 = 2.705543
)

// OrbitStar is one candidate's Monte Carlo draws of its present
// Galactocentric position (kpc) and velocity (km/s), equal lengths.
// ScoreEjection also needs, per draw, the law its velocity was drawn from
// given its position: VelMeanKms[j] and VelCovKms2[j] ((km/s)^2), the mean
// and covariance of the velocity the measured proper motion and radial
// velocity give at draw j's distance.
type OrbitStar struct {
	ID         string
	PosKpc     [][3]float64
	VelKms     [][3]float64
	VelMeanKms [][3]float64
	VelCovKms2 [][3][3]float64
}

// OrbitOptions controls FitOrbits. Zero fields take the defaults.
type OrbitOptions struct {
	// Scales multiply the base model's NFW characteristic mass M_s (r_s is
	// kept); positive, strictly increasing. Default LogScales(0.3, 3, 21).
	Scales []float64
	// Trace controls the back-traces; its DiskRadiusKpc is also the radius
	// of the uniform background disk.
	Trace orbit.TraceSettings
	Score Score
	// BackgroundWeight is eps in L = (1-eps) rho + eps rho_bg; default
	// 0.05. NoBackground sets eps = 0 (for tests and comparisons).
	BackgroundWeight float64
	NoBackground     bool
	// BandwidthFloorKpc is the least kernel width along any axis of the
	// crossing cloud (ScoreCrossings and selection); default 0.1 kpc.
	BandwidthFloorKpc float64
	// ScoreEjection only: the assumed ejection model (required), and the
	// top of the background's uniform speed law (default 3000 km/s).
	Ejection              *EjectionModel
	BackgroundSpeedMaxKms float64
	// SelectMinSpeedKms, ScoreEjection only: the least present speed of
	// the stars the caller selected (0: no speed cut). Each draw's speed
	// density is normalised over the speeds >= this at its own position
	// (ejectionDensity), and the background's uniform law runs from it.
	SelectMinSpeedKms float64
	// MaxRadiusKpc, ScoreEjection only: a star whose median draw lies
	// farther from the centre is not selected (OrbitResult.Far); default
	// DefaultOrbitMaxRadiusKpc, < 0: no limit.
	MaxRadiusKpc float64
	// Refine, ScoreEjection only: the speed density is evaluated on the
	// grid with each step of Scales split into Refine equal steps in ln
	// scale (default DefaultRefine; 1: Scales alone). The back-traces,
	// which only select the stars and weigh them against the background,
	// stay on Scales. Cheap because the potential is linear in the halo's
	// scale (ScaleHalo multiplies the NFW mass alone).
	Refine int
	// Workers for the back-traces (<= 0: GOMAXPROCS).
	Workers int
}

// DefaultRefine splits each of the 20 steps of the default grid in four
// (81 points, steps of 0.029 in ln scale): with a few hundred precise
// ejectees the likelihood's width falls to about one coarse step, where
// linear interpolation of ln L between coarse points misplaces its edges
// (ours, see TestOrbitIntervalCalibration).
const DefaultRefine = 4

// OrbitResult is the profile likelihood of the halo scale.
type OrbitResult struct {
	// Scales is the likelihood's grid, increasing: the options' Scales,
	// refined for ScoreEjection (OrbitOptions.Refine).
	Scales  []float64
	LogLike []float64 // sum over selected stars of ln L_i, per grid scale
	// PerStar[i][k] is ln L_i at Scales[k]; Selected[i] whether star i
	// enters LogLike (see FitOrbits).
	PerStar  [][]float64
	Selected []bool
	// Far[i]: star i was left out for lying beyond MaxRadiusKpc.
	Far []bool

	Best            float64 // grid scale of the largest LogLike
	Lo68, Hi68      float64 // Delta(-2 ln L) = 1 interval
	Lo90, Hi90      float64 // Delta(-2 ln L) = 2.71 interval
	AtEdge          bool    // Best is the first or last grid scale
	Open68, Open90  bool    // the interval runs into a grid edge
	Stars, Carrying int     // selected stars; those whose ln L varies > 0.5
	Score           Score
	// BackgroundWeight is the eps used.
	BackgroundWeight float64
}

// Errors returned by FitOrbits.
var (
	ErrNoNFW          = errors.New("weigh: base model has no nfw component")
	ErrBadScales      = errors.New("weigh: scales must be positive, finite and increasing")
	ErrNoEjectees     = errors.New("weigh: no star selected as a candidate ejectee")
	ErrNoEjectionLaw  = errors.New("weigh: ScoreEjection needs an Ejection model")
	ErrUnknownScore   = errors.New("weigh: unknown score")
	errLengthMismatch = errors.New("positions and velocities differ in number")
	errNoVelocityLaw  = errors.New("ScoreEjection needs each draw's velocity mean and covariance")
)

// medianRadiusKpc is the median distance of a star's draws from the
// centre.
func medianRadiusKpc(s *OrbitStar) float64 {
	r := make([]float64, len(s.PosKpc))
	for j, x := range s.PosKpc {
		r[j] = vec.Norm(x)
	}
	if len(r) == 0 {
		return math.NaN()
	}
	slices.Sort(r)
	if n := len(r); n%2 == 0 {
		return 0.5 * (r[n/2-1] + r[n/2])
	}
	return r[len(r)/2]
}

// LogScales returns n factors spaced evenly in log from lo to hi.
func LogScales(lo, hi float64, n int) []float64 {
	if n == 1 {
		return []float64{lo}
	}
	out := make([]float64, n)
	for k := range out {
		out[k] = lo * math.Pow(hi/lo, float64(k)/float64(n-1))
	}
	return out
}

// draw is one back-traced Monte Carlo draw that crossed the plane.
type draw struct {
	xKpc, yKpc float64 // where it crossed
	weight     float64 // kernel weight (1 in FitOrbits)
}

// EjectionDepthKpc is where ejection speeds are referred to: 10 pc from the
// centre, deep in the bulge's core yet where a central point mass's
// potential is finite (our choice). Referring the speed to one depth, not to
// where each draw crossed the plane, keeps the steep inner potential from
// mixing draws' speeds at different radii.
const EjectionDepthKpc = 0.01

// traceDraws back-traces each draw of a star under p, one at a time so that
// each crossing stays tied to its draw, and keeps those that crossed.
func traceDraws(p *potential.Model, s *OrbitStar, set orbit.TraceSettings) []draw {
	var out []draw
	for j := range s.PosKpc {
		tr := orbit.Trace(p, s.PosKpc[j:j+1], s.VelKms[j:j+1], set)
		if len(tr.Crossings) == 0 {
			continue
		}
		cr := tr.Crossings[0]
		out = append(out, draw{xKpc: cr.XKpc, yKpc: cr.YKpc, weight: 1})
	}
	return out
}

// cloud is a star's crossing cloud under one model with its kernel.
type cloud struct {
	draws    []draw
	nSamples int
	// Eigen-decomposition of the kernel bandwidth matrix H: variances l1, l2
	// (kpc^2) along (e1x, e1y) and its normal.
	l1, l2, e1x, e1y float64
	// Centre's squared Mahalanobis distance from the crossings' mean under
	// their covariance (eigenvalues floored like H's).
	d2 float64
}

// newCloud builds the kernel for the draws. The bandwidth matrix is
// H = n^(-1/3) S with S the crossings' covariance: the normal-reference rule
// h = (4/((d+2) n))^(1/(d+4)) in d = 2 dimensions (Silverman 1986, Density
// Estimation for Statistics and Data Analysis, Chapman & Hall, eq. 4.14,
// from memory; common practice), each eigenvalue floored at floorKpc^2 so
// that a tight cloud is not a spike and a single crossing still has a width.
func newCloud(ds []draw, nSamples int, floorKpc float64) cloud {
	c := cloud{draws: ds, nSamples: nSamples, d2: math.Inf(1)}
	n := len(ds)
	if n == 0 {
		return c
	}
	var mx, my float64
	for _, d := range ds {
		mx += d.xKpc
		my += d.yKpc
	}
	mx /= float64(n)
	my /= float64(n)
	var sxx, syy, sxy float64
	if n > 1 {
		for _, d := range ds {
			dx, dy := d.xKpc-mx, d.yKpc-my
			sxx += dx * dx
			syy += dy * dy
			sxy += dx * dy
		}
		k := float64(n - 1)
		sxx, syy, sxy = sxx/k, syy/k, sxy/k
	}
	// Eigen-decomposition of the symmetric 2x2 matrix S.
	tr, diff := 0.5*(sxx+syy), 0.5*(sxx-syy)
	rad := math.Hypot(diff, sxy)
	s1, s2 := tr+rad, tr-rad
	theta := 0.5 * math.Atan2(2*sxy, sxx-syy) // direction of s1
	c.e1x, c.e1y = math.Cos(theta), math.Sin(theta)
	fl := floorKpc * floorKpc
	u, w := c.along(-mx, -my)
	c.d2 = u*u/math.Max(s1, fl) + w*w/math.Max(s2, fl)
	f := math.Pow(float64(n), -1.0/3)
	c.l1, c.l2 = math.Max(f*s1, fl), math.Max(f*s2, fl)
	return c
}

// along returns the components of (dx, dy) along e1 and its normal.
func (c *cloud) along(dx, dy float64) (float64, float64) {
	return dx*c.e1x + dy*c.e1y, -dx*c.e1y + dy*c.e1x
}

// densityAtCentre is the weighted Gaussian kernel density estimate of the
// crossings at (0, 0), normalised by all draws so that draws which never
// crossed lower it (per kpc^2, times the crossed fraction and the weight).
func (c *cloud) densityAtCentre() float64 {
	if len(c.draws) == 0 || c.nSamples == 0 {
		return 0
	}
	var sum float64
	for _, d := range c.draws {
		u, w := c.along(-d.xKpc, -d.yKpc)
		sum += d.weight * math.Exp(-0.5*(u*u/c.l1+w*w/c.l2))
	}
	return sum / (2 * math.Pi * math.Sqrt(c.l1*c.l2) * float64(c.nSamples))
}

// consistentWithCentre is the selection test under one model: at least half
// of the draws crossed and the centre lies inside the SelectMaxGCConsistency
// ellipse of the crossings, 1 - exp(-D^2/2) <= level (chi-square with two
// degrees of freedom, Gaussian approximation, as orbit.Trace's
// GCConsistency; here the covariance is floored at the bandwidth floor
// instead of orbit's exact test along degenerate directions).
func (c *cloud) consistentWithCentre() bool {
	return c.nSamples > 0 && 2*len(c.draws) >= c.nSamples &&
		-math.Expm1(-0.5*c.d2) <= SelectMaxGCConsistency
}

// FitOrbits back-traces every draw of every star under the base model with
// its NFW halo scaled by each grid factor, selects the candidate ejectees
// and returns the profile log-likelihood of the scale,
//
//	ln L(s) = sum_i ln[(1 - eps) rho_i(s) + eps rho_bg,i],
//
// with rho_i the star's score and rho_bg,i its background, which stands
// for a disk or unknown origin so that one runaway cannot dominate.
// ScoreCrossings: rho_i = densityAtCentre under the grid model, rho_bg =
// 1/(pi R_d^2), a uniform disk of radius R_d = Trace.DiskRadiusKpc.
// ScoreEjection:
//
//	rho_i(s) = D_i q_i(s),     rho_bg,i = (D_i + 1/(pi R_d^2))/2 q_bg,i,
//
// q_i(s) the density of the star's measured velocity under the ejection
// model in the grid model s, per (km/s)^3: the mean over its draws j of
//
//	w_j ejectionDensity(s_j),    s_j = sHat_j + sSigma_j z_j,
//
// where the model's velocity at draw j's position is radial, speed times
// the unit radius, so the measurement's Gaussian law given that position
// (OrbitStar.VelMeanKms, VelCovKms2) becomes a weight w_j, how well a
// radial velocity explains the measurement, times a normal law of the
// speed, N(sHat_j, sSigma_j^2) (fitRadial; the model's spread across the
// radius, AcrossSigmaKms, widens it), which the draws integrate over as a
// stratified sample (z_j = strataZ). q_bg,i is the mean over the draws of
// w_j speedBackground(s_j), a speed along the radius uniform on
// [SelectMinSpeedKms, BackgroundSpeedMaxKms]: the background shares the
// ejectees' radial direction because the selection (back-traces through
// the centre) has already required it of every star that enters, so the
// mixture weighs the speed law alone, and a star that no radial velocity
// explains weighs little either way. Half the background has the star's
// own crossing density at the centre, half the uniform disk's: a fast
// non-ejectee whose back-traces happen to pass the centre (a spoilt
// astrometric fit, a runaway) is not made an ejectee by its crossings
// alone. The mean over draws stands for the integral over the
// measurement errors (the draws follow the error law under a flat prior;
// the likelihood of the data is the mean of the model's density over
// them, not a product). Why not each draw's full speed |v_j|, as we did
// first: the errors across the line of sight add to it in quadrature (a
// noisy vector's length is biased high), and on the invented scenarios
// that put the fastest candidates past the top of the ejection law then
// assumed (a box ending at 1800 km/s) under the true halo and pulled the
// mass low. D_i is not taken per model on purpose: in a spherical halo
// an ejectee's angular momentum L is conserved, its back-traced impact
// parameter is about L/v_c, and the
// crossing density at the centre then grows with the halo (see the
// LIMITATION below) without saying anything about it; D_i only weighs the
// star as an ejectee against the background. SIMPLIFICATION against
// Gnedin et al. 2005 (ApJ 634, 344) and Contigiani, Rossi & Marchetti 2019
// (MNRAS 487, 4025), who use the full phase-space density of the ejecta:
// we keep its velocity given the position (radial orbits,
// ejectionDensity, fitRadial); the direction of the position, which in a
// nearly spherical potential does not depend on the halo's mass, enters
// through D_i and the selection only.
//
// A star is selected (a candidate ejectee) when under at least one grid
// model at least half of its draws crossed and the centre lies inside the
// 99 per cent ellipse of its crossings (cloud.consistentWithCentre); only
// selected stars enter LogLike. The speed cut that makes a star fast is the
// caller's.
//
// LIMITATION of ScoreCrossings (measured in the tests): in a spherical halo
// an orbit through the centre is radial whatever the halo mass, so only the
// flattened disk bends the back-traces, by a few tenths of a kpc over a
// factor ten in M_s. The crossings then carry almost no information on the
// halo scale; what ln L does vary is a focusing effect (a heavier halo
// speeds the draws up near the centre and tightens their cloud) that
// favours the heaviest halo whatever the truth. ScoreEjection weighs the
// halo through the energy, v_0^2 = v^2 + 2 Delta Phi, and the flight time
// against the assumed ejection model; its answer is conditional on that
// model.
//
// It returns ErrNoEjectees (with the partial result) when no star is
// selected, and ctx.Err() if cancelled.
func FitOrbits(ctx context.Context, base *potential.Model, stars []OrbitStar, opt OrbitOptions) (*OrbitResult, error) {
	scales := opt.Scales
	if len(scales) == 0 {
		scales = LogScales(DefaultOrbitScaleMin, DefaultOrbitScaleMax, DefaultOrbitScaleCount)
	}
	for k, s := range scales {
		if !(s > 0) || math.IsInf(s, 0) || (k > 0 && !(s > scales[k-1])) {
			return nil, ErrBadScales
		}
	}
	switch opt.Score {
	case ScoreCrossings:
	case ScoreEjection:
		if opt.Ejection == nil {
			return nil, ErrNoEjectionLaw
		}
		if err := opt.Ejection.Validate(); err != nil {
			return nil, err
		}
	default:
		return nil, ErrUnknownScore
	}
	eps := opt.BackgroundWeight
	if !(eps > 0) {
		eps = DefaultBackgroundWeight
	}
	if opt.NoBackground {
		eps = 0
	}
	floor := opt.BandwidthFloorKpc
	if !(floor > 0) {
		floor = DefaultBandwidthFloorKpc
	}
	vMax := opt.BackgroundSpeedMaxKms
	if !(vMax > 0) {
		vMax = DefaultBackgroundSpeedMaxKms
	}
	diskKpc := opt.Trace.DiskRadiusKpc
	if !(diskKpc > 0) {
		diskKpc = orbit.DefaultDiskRadiusKpc
	}
	maxR := opt.MaxRadiusKpc
	if maxR == 0 {
		maxR = DefaultOrbitMaxRadiusKpc
	}
	for i, s := range stars {
		if len(s.PosKpc) != len(s.VelKms) {
			return nil, fmt.Errorf("weigh: star %d (%s): %w", i, s.ID, errLengthMismatch)
		}
		if opt.Score == ScoreEjection && (len(s.VelMeanKms) != len(s.PosKpc) || len(s.VelCovKms2) != len(s.PosKpc)) {
			return nil, fmt.Errorf("weigh: star %d (%s): %w", i, s.ID, errNoVelocityLaw)
		}
	}
	models := make([]*potential.Model, len(scales))
	for k, s := range scales {
		m, err := ScaleHalo(base, s)
		if err != nil {
			return nil, err
		}
		models[k] = m
	}
	fine := append([]float64(nil), scales...)
	refine := opt.Refine
	if refine <= 0 {
		refine = DefaultRefine
	}
	if opt.Score == ScoreEjection && refine > 1 && len(scales) > 1 {
		fine = fine[:0]
		for k := range len(scales) - 1 {
			a, b := math.Log(scales[k]), math.Log(scales[k+1])
			for j := range refine {
				fine = append(fine, math.Exp(a+(b-a)*float64(j)/float64(refine)))
			}
		}
		fine = append(fine, scales[len(scales)-1])
	}
	// The potential at halo scale s is Phi_1 + (s - 1) (Phi_2 - Phi_1).
	twice, err := ScaleHalo(base, 2)
	if err != nil {
		return nil, err
	}
	res := &OrbitResult{
		Scales: fine, Score: opt.Score, BackgroundWeight: eps,
		PerStar:  make([][]float64, len(stars)),
		Selected: make([]bool, len(stars)),
		Far:      make([]bool, len(stars)),
		LogLike:  make([]float64, len(fine)),
	}
	// One star under every model is one batch: many integrations each.
	err = parallel.Batches(ctx, len(stars), 1, opt.Workers, func(_ *struct{}, i, _ int) {
		s := &stars[i]
		bg := 1 / (math.Pi * diskKpc * diskKpc)
		row := make([]float64, len(scales))
		sel := false
		if opt.Score == ScoreCrossings {
			for k, m := range models {
				c := newCloud(traceDraws(m, s, opt.Trace), len(s.PosKpc), floor)
				row[k] = math.Log((1-eps)*c.densityAtCentre() + eps*bg)
				sel = sel || c.consistentWithCentre()
			}
			res.PerStar[i], res.Selected[i] = row, sel
			return
		}
		if maxR > 0 && medianRadiusKpc(s) > maxR {
			res.PerStar[i], res.Far[i] = make([]float64, len(fine)), true
			return
		}
		vSel := math.Max(opt.SelectMinSpeedKms, 0)
		dMax := 0.0
		for _, m := range models {
			c := newCloud(traceDraws(m, s, opt.Trace), len(s.PosKpc), floor)
			dMax = math.Max(dMax, c.densityAtCentre())
			sel = sel || c.consistentWithCentre()
		}
		row = make([]float64, len(fine))
		z := strataZ(len(s.PosKpc))
		fits := make([]radialFit, len(s.PosKpc))
		// The weights are taken relative to the largest, whose logarithm
		// is added back at the end.
		top := math.Inf(-1)
		for j := range s.PosKpc {
			fits[j] = fitRadial(s.PosKpc[j], s.VelMeanKms[j], &s.VelCovKms2[j])
			if fits[j].ok {
				top = math.Max(top, fits[j].logWeight)
			}
		}
		if math.IsInf(top, -1) {
			// No draw's law is usable (a singular covariance): the star
			// says nothing about the halo.
			res.PerStar[i], res.Selected[i] = row, sel
			return
		}
		qBg := 0.0
		for j, rf := range fits {
			w := math.Exp(rf.logWeight - top)
			if !rf.ok || w == 0 {
				continue
			}
			speed := rf.sHat + rf.sSigma*z[j]
			qBg += w * speedBackground(speed, vSel, vMax)
			r1, r2 := newRay(base, s.PosKpc[j]), newRay(twice, s.PosKpc[j])
			for k, sc := range fine {
				r := r1.scaled(&r2, sc)
				row[k] += w * ejectionDensity(opt.Ejection, &r, speed, vSel)
			}
		}
		n := float64(len(s.PosKpc))
		for k, q := range row {
			row[k] = math.Log((1-eps)*dMax*q/n+eps*0.5*(dMax+bg)*qBg/n) + top
		}
		res.PerStar[i], res.Selected[i] = row, sel
	}, nil)
	if err != nil {
		return nil, err
	}
	for i, row := range res.PerStar {
		if !res.Selected[i] {
			continue
		}
		res.Stars++
		for k, v := range row {
			res.LogLike[k] += v
		}
		if res.Carries(i) {
			res.Carrying++
		}
	}
	if res.Stars == 0 {
		return res, ErrNoEjectees
	}
	res.profile()
	return res, nil
}

// Swing returns how much star i's ln L varies over the grid (its largest
// less its smallest value) and the grid scale of its largest (see
// Carries).
func (r *OrbitResult) Swing(i int) (swing, bestScale float64) {
	row := r.PerStar[i]
	if len(row) == 0 {
		return 0, math.NaN()
	}
	kb, lo := 0, math.Inf(1)
	for k, v := range row {
		lo = math.Min(lo, v)
		if v > row[kb] {
			kb = k
		}
	}
	return row[kb] - lo, r.Scales[kb]
}

// Carries reports whether star i carries the fit: its ln L varies by more
// than CarryingDeltaLogLike over the grid.
func (r *OrbitResult) Carries(i int) bool {
	swing, _ := r.Swing(i)
	return swing > CarryingDeltaLogLike
}

// profile sets Best, the intervals and the edge flags from LogLike. Why
// Wilks intervals, although an ejection model with sharp edges (a box
// speed law, a flight-time window) makes the likelihood non-regular: on
// simulated ejectees they covered their levels once the grid was fine
// enough (see TestOrbitIntervalCalibration, which compares them with the
// equal-tailed intervals of a posterior uniform in ln scale).
func (r *OrbitResult) profile() {
	kb := 0
	for k, v := range r.LogLike {
		if v > r.LogLike[kb] {
			kb = k
		}
	}
	n := len(r.Scales)
	r.Best = r.Scales[kb]
	r.AtEdge = kb == 0 || kb == n-1
	r.Lo68, r.Hi68, r.Open68 = r.interval(kb, delta2LogL68)
	r.Lo90, r.Hi90, r.Open90 = r.interval(kb, delta2LogL90)
}

// interval walks out from the maximum kb to where -2 Delta ln L first
// reaches d, interpolating linearly in ln(scale) between grid points (a
// -Inf ln L, possible only without background, puts the crossing at the
// outer grid point). Where the curve stays below d up to a grid edge that
// edge is returned and open is true.
func (r *OrbitResult) interval(kb int, d float64) (lo, hi float64, open bool) {
	top := r.LogLike[kb]
	drop := func(k int) float64 { return 2 * (top - r.LogLike[k]) }
	cross := func(kIn, kOut int) float64 {
		a, b := drop(kIn), drop(kOut)
		f := 1.0
		if !math.IsInf(b, 1) {
			f = (d - a) / (b - a)
		}
		la, lb := math.Log(r.Scales[kIn]), math.Log(r.Scales[kOut])
		return math.Exp(la + f*(lb-la))
	}
	lo, hi = r.Scales[0], r.Scales[len(r.Scales)-1]
	openLo, openHi := true, true
	for k := kb; k > 0; k-- {
		if drop(k-1) >= d {
			lo, openLo = cross(k, k-1), false
			break
		}
	}
	for k := kb; k < len(r.Scales)-1; k++ {
		if drop(k+1) >= d {
			hi, openHi = cross(k, k+1), false
			break
		}
	}
	return lo, hi, openLo || openHi
}
