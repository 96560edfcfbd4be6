package kinematics

import (
	"math"

	"starvet/galaxy/frames"
	"starvet/galaxy/potential"
	"starvet/internal/units"
	"starvet/internal/vec"
)

// worker holds the per-goroutine scratch space; one worker per goroutine.
type worker struct {
	rnd  stream // astrometry and distance
	rndV stream // radial velocity

	// Draws: distance (kpc), parallax implied or drawn (mas, zero point
	// removed), proper motions (mas/yr), rv (km/s).
	dist, plx, pmRA, pmDec, rv []float64
	distSave                   []float64 // the distances across a look (summarise reorders them)
	// Per-draw kinematics, stored as squares so that no draw needs a
	// square root (the quantiler undoes the map on the order statistics):
	// speed^2, r_gc^2, v_esc^2 and v_tan^2, and v_r |v_r| for the radial
	// velocity, whose sign matters. vesc2 is filled only when the escape
	// table is not monotone (see escapeRange).
	speed2, rgc2, vrad2, vtan2, vesc2 []float64
	// Velocity-prior scratch: weights, resample indices, a gather buffer,
	// and whether each draw is unbound.
	wt, tmp     []float64
	z           []float64 // standard normals drawn ahead, up to three per draw
	idx         []int
	unbound     []bool
	table       edsdTable
	esc         losEscape
	quant       quantiler
	exactEscape bool // never tabulate the escape speed (for tests)
}

// The escape-speed table along the line of sight (losEscape) is used when a
// star has at least losMinDraws draws, with at most one cell per
// losDrawsPerCell draws; otherwise Phi is evaluated for every draw.
const (
	losMinDraws     = 128
	losDrawsPerCell = 8
)

func (w *worker) init(n int) {
	for _, b := range []*[]float64{&w.dist, &w.plx, &w.pmRA, &w.pmDec, &w.rv, &w.speed2, &w.rgc2, &w.vrad2, &w.vtan2, &w.vesc2, &w.wt, &w.tmp, &w.distSave} {
		*b = resize(*b, n)
	}
	w.z = resize(w.z, 3*n)
	if cap(w.idx) < n {
		w.idx = make([]int, n)
		w.unbound = make([]bool, n)
	}
	w.idx, w.unbound = w.idx[:n], w.unbound[:n]
}

// lineOfSight is the linear map from (distance, pm, rv) to Galactocentric
// position and velocity on one line of sight, taken from
// frames.Sun.ToGalactocentric (which is affine in distance and in rv, and
// bilinear in distance and pm) so the frame conventions live in one place:
//
//	pos = pos0 + d * posR
//	vel = vel0 + rv * velR + d * (pmRA * velA + pmDec * velD)
type lineOfSight struct {
	pos0, posR, vel0, velR, velA, velD [3]float64
}

func newLineOfSight(sun frames.Sun, raDeg, decDeg float64) lineOfSight {
	b := frames.NewBasis(raDeg*units.RadPerDeg, decDeg*units.RadPerDeg)
	var l lineOfSight
	var p1, vR, vA, vD [3]float64
	l.pos0, l.vel0 = sun.ToGalactocentric(b, 0, 0, 0, 0)
	p1, _ = sun.ToGalactocentric(b, 1, 0, 0, 0)
	_, vR = sun.ToGalactocentric(b, 0, 0, 0, 1)
	_, vA = sun.ToGalactocentric(b, 1, 1, 0, 0)
	_, vD = sun.ToGalactocentric(b, 1, 0, 1, 0)
	for i := range 3 {
		l.posR[i] = p1[i] - l.pos0[i]
		l.velR[i] = vR[i] - l.vel0[i]
		l.velA[i] = vA[i] - l.vel0[i]
		l.velD[i] = vD[i] - l.vel0[i]
	}
	return l
}

func (l *lineOfSight) at(d, pmRA, pmDec, rv float64) (pos, vel [3]float64) {
	for i := range 3 {
		pos[i] = l.pos0[i] + d*l.posR[i]
		vel[i] = l.vel0[i] + rv*l.velR[i] + d*(pmRA*l.velA[i]+pmDec*l.velD[i])
	}
	return pos, vel
}

// minSpeedVelocity removes the line-of-sight component from vel: the
// velocity is vel(rv) = vel(0) + rv u with u the unit line of sight, and
// |vel(rv)| is smallest at rv = -vel(0).u, where it equals
// |vel(0) - (vel(0).u) u| (minimum of a quadratic in rv).
func (l *lineOfSight) minSpeedVelocity(vel [3]float64) [3]float64 {
	u := l.velR
	k := vec.Dot(vel, u) / vec.Dot(u, u)
	return [3]float64{vel[0] - k*u[0], vel[1] - k*u[1], vel[2] - k*u[2]}
}

// minSpeed returns the map whose velocities are the minimum-speed ones of
// l for every distance and proper motion: the removal of the line-of-sight
// component is linear, so it applies to vel0, velA and velD once per star
// instead of once per draw; the rv term vanishes.
func (l *lineOfSight) minSpeed() lineOfSight {
	m := *l
	m.vel0, m.velA, m.velD = l.minSpeedVelocity(l.vel0), l.minSpeedVelocity(l.velA), l.minSpeedVelocity(l.velD)
	m.velR = [3]float64{}
	return m
}

// r2At is |pos(d)|^2 computed as in the per-draw loop of speeds.
func (l *lineOfSight) r2At(d float64) float64 {
	x := l.pos0[0] + d*l.posR[0]
	y := l.pos0[1] + d*l.posR[1]
	z := l.pos0[2] + d*l.posR[2]
	return x*x + y*y + z*z
}

// r2Monotone reports whether |pos(d)|^2 is monotone for d in [dMin, dMax],
// and in which direction: it is a quadratic in d with its minimum at
// d* = -pos0.posR / |posR|^2, so it rises beyond d* and falls before it.
func (l *lineOfSight) r2Monotone(dMin, dMax float64) (increasing, ok bool) {
	dStar := -vec.Dot(l.pos0, l.posR) / vec.Dot(l.posR, l.posR)
	switch {
	case dStar <= dMin:
		return true, true
	case dStar >= dMax:
		return false, true
	}
	return false, false
}

// escapeSpeed is sqrt(2 (Phi(r_lim) - Phi(x))) with Phi(r_lim) = 0 when
// escRadiusKpc is 0 (escape to infinity) or Phi at escRadiusKpc along the
// direction of x; 0 at or beyond the escape radius (common practice, e.g.
// Piffl et al. 2014, A&A 562, A91, eq. 1).
func escapeSpeed(p potential.Potential, x [3]float64, rKpc, escRadiusKpc float64) float64 {
	return math.Sqrt(escapeSpeed2(p, x, rKpc, escRadiusKpc))
}

// escapeSpeed2 is the square of escapeSpeed.
func escapeSpeed2(p potential.Potential, x [3]float64, rKpc, escRadiusKpc float64) float64 {
	phiLim := 0.0
	if escRadiusKpc > 0 {
		if rKpc >= escRadiusKpc {
			return 0
		}
		k := escRadiusKpc / rKpc
		phiLim = p.Phi([3]float64{x[0] * k, x[1] * k, x[2] * k})
	}
	d := phiLim - p.Phi(x)
	if d <= 0 {
		return 0
	}
	return 2 * d
}

// evaluate fills r for one star, step by step; a step that fails the star
// (r.OK false) ends it. The draws live in the worker's scratch space, so a
// star allocates nothing for them. The draws come in blocks (stop.go):
// one block of Settings.Samples without early stopping.
func (w *worker) evaluate(s *Star, set *Settings, p potential.Potential, r *Result) {
	r.reset(s.ID)
	r.OK = true
	corr, ok := validateInputs(s, set, r)
	if !ok {
		return
	}
	method, catDist := chooseDistance(s, set, r)
	r.Method = method
	if !r.OK {
		return
	}
	w.init(set.Samples)
	w.rnd.seed(starSeed(set.Seed, s.ID, streamAstrometry))
	w.rndV.seed(starSeed(set.Seed, s.ID, streamRV))
	dr, ok := w.prepareAstrometry(s, set, method, catDist, corr, r)
	if !ok {
		return
	}
	hasRV := vec.Finite(s.RVKms) && vec.Finite(s.RVErrKms)
	stopping := set.StopBelowP > 0
	alpha := 0.0
	if stopping {
		alpha = stopAlpha(set.StopSigma, set.Samples)
	}
	for {
		end := set.Samples
		if stopping {
			end = nextBlockEnd(dr.attempts, set.Samples)
		}
		k0 := dr.kept
		if !w.drawBlock(&dr, end, set, r) {
			return
		}
		w.drawRVBlock(s, hasRV, k0, dr.kept)
		if end == set.Samples {
			if w.finish(s, set, p, &dr, hasRV, r) && stopping {
				r.PUnboundUpper = upperBound(r, alpha)
			}
			return
		}
		// A look: the star summarised as if it ended here, kept if it
		// may stop, else undone. A catalog distance that the parallax
		// barely admits goes on to the full draws, where its conflict is
		// judged as without stopping.
		if dr.kept == 0 || (dr.catPlx && dr.accept < catalogConflictShare) {
			continue
		}
		nReasons, rndV := len(r.Reasons), w.rndV
		copy(w.distSave[:dr.kept], w.dist[:dr.kept])
		w.finish(s, set, p, &dr, hasRV, r)
		if fastTail(r, set.TailEscFraction) {
			stopping = false // never stops: straight on to Samples
		} else if u := upperBound(r, alpha); u < set.StopBelowP {
			r.PUnboundUpper, r.Stopped = u, true
			return
		}
		r.Reasons, w.rndV = r.Reasons[:nReasons], rndV
		copy(w.dist[:dr.kept], w.distSave[:dr.kept])
	}
}

// finish summarises the draws made so far into r; false when it failed r
// (no draw kept).
func (w *worker) finish(s *Star, set *Settings, p potential.Potential, dr *drawing, hasRV bool, r *Result) bool {
	if !w.finishAstrometry(dr, r) {
		return false
	}
	kept := dr.kept
	r.Samples = kept
	r.HasRV = hasRV
	rvNomKms := 0.0
	if hasRV {
		rvNomKms = s.RVKms
	} else if vec.Finite(s.RVKms) {
		r.note(ReasonNoRV, "radial-velocity uncertainty missing: speeds are lower bounds over all radial velocities")
	} else {
		r.note(ReasonNoRV, "no radial velocity: speeds are lower bounds over all radial velocities")
	}
	d := starDraws{los: newLineOfSight(set.Sun, s.RADeg, s.DecDeg), kept: kept, keep: min(set.KeepSamples, kept)}
	if !r.HasRV {
		d.los = d.los.minSpeed()
	}
	w.escapeRange(p, set, &d)
	w.speeds(p, set, &d, r)
	w.summarise(set, &d, r)
	r.PosKpc, r.VelKms = d.los.at(r.DistKpc[1], s.PMRAMasYr, s.PMDecMasYr, rvNomKms)
	return true
}

// validateInputs fails r unless the star has a position, proper motions
// with their uncertainties, usable uncertainties and correlations, and
// the settings are valid. It returns the correlations of (parallax, pm_ra),
// (parallax, pm_dec) and (pm_ra, pm_dec), a missing one taken as 0.
func validateInputs(s *Star, set *Settings, r *Result) (corr [3]float64, ok bool) {
	if err := set.Validate(); err != nil {
		r.fail(ReasonSettings, "%v", err)
		return corr, false
	}
	if !vec.Finite(s.RADeg) || !vec.Finite(s.DecDeg) {
		r.fail(ReasonNoPosition, "ra or dec missing")
		return corr, false
	}
	if !vec.Finite(s.PMRAMasYr) || !vec.Finite(s.PMDecMasYr) {
		r.fail(ReasonProperMotion, "proper motion missing")
		return corr, false
	}
	if !vec.Finite(s.PMRAErrMasYr) || !vec.Finite(s.PMDecErrMasYr) {
		r.fail(ReasonProperMotion, "proper-motion uncertainty missing")
		return corr, false
	}
	for _, u := range []struct {
		name string
		v    float64
	}{
		{"proper motion in ra", s.PMRAErrMasYr}, {"proper motion in dec", s.PMDecErrMasYr},
		{"parallax", s.ParallaxErrMas}, {"radial velocity", s.RVErrKms},
		{"distance", s.DistErrKpc}, {"distance modulus", s.DistModErr},
	} {
		if u.v < 0 || math.IsInf(u.v, 0) {
			r.fail(ReasonBadUncertainty, "%s uncertainty %v must be finite and not negative", u.name, u.v)
			return corr, false
		}
	}
	corr = [3]float64{s.CorrParallaxPMRA, s.CorrParallaxPMDec, s.CorrPMRAPMDec}
	for i, c := range corr {
		if math.IsNaN(c) {
			corr[i] = 0
		} else if !(c >= -1 && c <= 1) {
			r.fail(ReasonBadCorrelation, "correlation %v outside [-1, 1]", c)
			return corr, false
		}
	}
	return corr, true
}

// drawing is a star's drawing state across blocks: what prepareAstrometry
// set up once, and how far the draws have gone.
type drawing struct {
	method   string
	cat      catalogDistance
	joint    gauss      // (parallax, pm_ra, pm_dec)
	cond     gauss      // the proper motions given the parallax (edsd, catPlx)
	beta     [2]float64 // their regression on the parallax
	mean     [3]float64
	wObs, sw float64 // parallax (zero point removed) and its error, mas
	catPlx   bool    // a catalog distance weighed by the parallax
	accept   float64 // catPlx: the share of catalog distances the parallax admits
	// tabled: the distances come from w.table by inverse CDF (edsd with a
	// parallax error, catPlx with a catalog error), else they are
	// pointKpc.
	tabled   bool
	pointKpc float64
	pm       stream // the proper motions of tabled draws (streamPM)
	attempts int    // draws attempted: the index of the next draw of the stream
	kept     int
	dropped  int // inverse: draws with a non-positive parallax
}

// prepareAstrometry sets up the draws of (distance, parallax, proper
// motions) by method; false when it failed r.
func (w *worker) prepareAstrometry(s *Star, set *Settings, method string, catDist catalogDistance, corr [3]float64, r *Result) (dr drawing, ok bool) {
	dr.method, dr.cat = method, catDist
	// Covariance of (parallax, pm_ra, pm_dec); the parallax row is only
	// used by the parallax methods.
	sw, sa, sd := s.ParallaxErrMas, s.PMRAErrMasYr, s.PMDecErrMasYr
	if method == MethodCatalog && !(vec.Finite(s.ParallaxMas) && sw > 0) {
		sw = 0 // no parallax to weigh the catalog distance with
	}
	cov := [3][3]float64{
		{sw * sw, corr[0] * sw * sa, corr[1] * sw * sd},
		{corr[0] * sw * sa, sa * sa, corr[2] * sa * sd},
		{corr[1] * sw * sd, corr[2] * sa * sd, sd * sd},
	}
	wCorr := s.ParallaxMas - set.ParallaxZeroPointMas
	dr.mean = [3]float64{wCorr, s.PMRAMasYr, s.PMDecMasYr}
	dr.joint, ok = newGauss(3, dr.mean, &cov)
	if !ok {
		r.fail(ReasonCovariance, "covariance of parallax and proper motions not positive definite")
		return dr, false
	}
	dr.wObs, dr.sw = dr.mean[0], math.Sqrt(cov[0][0])
	switch method {
	case MethodEDSD:
		dr.beta, dr.cond = conditionalPM(&cov, &dr.joint)
		dr.tabled, dr.pointKpc = dr.sw > 0, 1/dr.wObs
		if dr.sw == 0 {
			// A zero parallax error: the posterior is the point 1/w.
			if dr.wObs <= 0 {
				r.fail(ReasonNonPositivePlx, "non-positive parallax with zero uncertainty")
				return dr, false
			}
		} else if !w.table.build(dr.wObs, dr.sw, set.EDSDLengthKpc) {
			r.fail(ReasonDegenerateSample, "edsd posterior could not be tabulated for parallax %v +- %v mas", dr.wObs, dr.sw)
			return dr, false
		}
	case MethodCatalog:
		if dr.catPlx = sw > 0; dr.catPlx && !w.prepareCatalogWithParallax(&dr, &cov, r) {
			return dr, false
		}
	}
	if dr.tabled {
		dr.pm.seed(starSeed(set.Seed, s.ID, streamPM))
	} else {
		dr.pm = w.rnd // a single distance: the proper motions follow in the astrometry stream
	}
	return dr, true
}

// prepareCatalogWithParallax sets up the draws of an independent (catalog)
// distance that the star's own parallax also constrains. The catalog
// distance is the prior and the parallax the likelihood:
//
//	p(d | w) ∝ p_cat(d) exp(-(w - 1/d)^2 / (2 s^2))
//
// (Bayes' theorem with a normal parallax likelihood, as in Bailer-Jones
// 2015, PASP 127, 994, with the catalog distance in place of a
// space-density prior), tabulated (edsdTable.buildCatalog) and drawn by
// inverse CDF like the EDSD posterior. The proper motions then come from
// their normal conditional on the true parallax 1/d, as for EDSD, so the
// parallax-pm correlations are kept. A parallax of low significance leaves
// the catalog distance almost unchanged; a discordant one pulls it, and
// one that admits less than 1/maxCatalogTries of the catalog distance's
// probability (the share a rejection sampler from the catalog distance
// would keep) fails the star. False when it failed r.
func (w *worker) prepareCatalogWithParallax(dr *drawing, cov *[3][3]float64, r *Result) bool {
	dr.beta, dr.cond = conditionalPM(cov, &dr.joint)
	wObs, sw := dr.wObs, dr.sw
	lnLMax := 0.0 // L_max = 1: 1/d = w is reachable
	if wObs <= 0 {
		lnLMax = -wObs * wObs / (2 * sw * sw) // d -> infinity
	}
	lnAccept := math.Inf(-1)
	if dr.cat.sigma > 0 {
		var ok bool
		lnAccept, ok = w.table.buildCatalog(dr.cat, wObs, sw, lnLMax)
		dr.tabled = ok
	} else {
		dr.pointKpc = dr.cat.mean
		if dr.cat.modulus {
			dr.pointKpc = dr.cat.modKpc
		}
		z := (wObs - 1/dr.pointKpc) / sw
		lnAccept = -z*z/2 - lnLMax
	}
	dr.accept = math.Exp(lnAccept)
	if !(lnAccept >= -math.Log(maxCatalogTries)) {
		r.fail(ReasonPlxConflict, "the parallax %.4g +- %.2g mas excludes the catalog distance (it admits a share %.2g of it)", wObs, sw, dr.accept)
		return false
	}
	return true
}

// drawBlock makes the draws dr.attempts..end-1, appending the kept ones;
// false when it failed r.
func (w *worker) drawBlock(dr *drawing, end int, set *Settings, r *Result) bool {
	n := end - dr.attempts
	lo := dr.kept
	switch dr.method {
	case MethodInverse:
		if dr.joint.nAct == 3 {
			var dropped int
			dr.kept, dropped = w.drawInverse3(&dr.joint, lo, n)
			dr.dropped += dropped
			break
		}
		for range n {
			var x [3]float64
			dr.joint.draw(&w.rnd, &x)
			if x[0] <= 0 {
				dr.dropped++
				continue
			}
			k := dr.kept
			w.dist[k], w.plx[k], w.pmRA[k], w.pmDec[k] = 1/x[0], x[0], x[1], x[2]
			dr.kept++
		}
	case MethodEDSD:
		w.drawTabled(dr, lo, end)
		dr.kept = end
	case MethodCatalog:
		if dr.catPlx {
			w.drawTabled(dr, lo, end)
			dr.kept = end
			break
		}
		for i := lo; i < end; i++ {
			var x [3]float64
			dr.joint.draw(&w.rnd, &x)
			w.dist[i], w.plx[i], w.pmRA[i], w.pmDec[i] = dr.cat.draw(&w.rnd), math.NaN(), x[1], x[2]
		}
		dr.kept = end
	}
	dr.attempts = end
	return true
}

// finishAstrometry notes what the draws so far dropped or found; false
// when no draw was kept (the star fails).
func (w *worker) finishAstrometry(dr *drawing, r *Result) bool {
	switch {
	case dr.method == MethodInverse:
		if dr.dropped > 0 {
			r.note(ReasonPlxDrawsDropped, "%d of %d parallax draws non-positive, dropped", dr.dropped, dr.attempts)
		}
		if dr.kept == 0 {
			r.fail(ReasonNonPositivePlx, "every parallax draw non-positive with inverse distance")
			return false
		}
	case dr.catPlx:
		if dr.accept < catalogConflictShare {
			r.note(ReasonPlxConflict, "the parallax %.4g +- %.2g mas and the catalog distance disagree: it admits %.1f%% of the catalog distance", dr.wObs, dr.sw, 100*dr.accept)
		}
	}
	return true
}

// drawInverse3 is the inverse-distance loop of drawBlock for a joint normal
// with all three components active: the 3n normals that n calls of
// joint.draw take are drawn first, then mapped with the same arithmetic;
// the kept draws go from index kept on.
func (w *worker) drawInverse3(joint *gauss, kept, n int) (keptAfter, dropped int) {
	z := w.z[:3*n]
	w.rnd.normals(z)
	dist, plx, pmRA, pmDec := w.dist[kept:kept+n], w.plx[kept:kept+n], w.pmRA[kept:kept+n], w.pmDec[kept:kept+n]
	l, m := &joint.lower, joint.mean
	j := 0
	for i := range n {
		zi := z[3*i : 3*i+3 : 3*i+3]
		z0, z1, z2 := zi[0], zi[1], zi[2]
		x0 := m[0] + l[0][0]*z0
		if x0 <= 0 {
			dropped++
			continue
		}
		x1 := m[1] + (l[1][0]*z0 + l[1][1]*z1)
		x2 := m[2] + (l[2][0]*z0 + l[2][1]*z1 + l[2][2]*z2)
		dist[j], plx[j], pmRA[j], pmDec[j] = 1/x0, x0, x1, x2
		j++
	}
	return kept + j, dropped
}

// drawRVBlock fills the radial-velocity draws lo..hi-1 from their own
// stream (0 without a usable radial velocity).
func (w *worker) drawRVBlock(s *Star, hasRV bool, lo, hi int) {
	rv := w.rv[lo:hi]
	if !hasRV {
		clear(rv)
		return
	}
	w.rndV.normals(rv)
	rvKms, rvErr := s.RVKms, s.RVErrKms
	for i, z := range rv {
		rv[i] = rvKms + rvErr*z
	}
}

// starDraws is what the steps of evaluate hand on about one star's draws.
type starDraws struct {
	los              lineOfSight // the minimum-speed map without a radial velocity
	kept, keep       int         // draws kept; the first keep are traced
	dMinKpc, dMaxKpc float64     // range of the kept distances
	// escMonotone: w.esc is a table monotone in distance, whose v_esc^2
	// lies in [ve2Lo, ve2Hi]; otherwise that range is (-Inf, +Inf).
	escMonotone  bool
	ve2Lo, ve2Hi float64
	unbound      int // draws faster than their escape speed
	// span of speed2, vrad2 and vtan2 over the kept draws, as span
	// returns them (valid until the velocity prior resamples the draws).
	speed2Span, vrad2Span, vtan2Span [2]float64
}

// escapeRange tabulates the escape speed along the line of sight when the
// star has enough draws. With a monotone table the v_esc median needs no
// per-draw values (summarise), and v_esc^2 lies between its values at the
// ends of the table: a draw faster or slower than that whole range needs
// no lookup. Otherwise the range is open and every draw looks up.
func (w *worker) escapeRange(p potential.Potential, set *Settings, d *starDraws) {
	d.dMinKpc, d.dMaxKpc = span(w.dist[:d.kept])
	w.esc.ok = false
	if d.kept >= losMinDraws && !w.exactEscape {
		w.esc.build(p, &d.los, d.dMinKpc, d.dMaxKpc, set.EscapeRadiusKpc, d.kept/losDrawsPerCell)
	}
	d.escMonotone = w.esc.ok && w.esc.monotone != 0
	d.ve2Lo, d.ve2Hi = math.Inf(-1), math.Inf(1)
	if d.escMonotone {
		a, b := w.esc.vesc2(d.dMinKpc), w.esc.vesc2(d.dMaxKpc)
		d.ve2Lo, d.ve2Hi = min(a, b), max(a, b)
	}
}

// speeds computes, for every kept draw, the Galactocentric position and
// velocity, the squares of speed, r_gc, v_r (signed) and v_tan, whether
// the draw is unbound (v > v_esc, v_esc^2 stored where it was looked up),
// and the traced draws' phase-space points into r.
func (w *worker) speeds(p potential.Potential, set *Settings, d *starDraws, r *Result) {
	r.SamplePos = growVec(r.SamplePos, d.keep)
	r.SampleVel = growVec(r.SampleVel, d.keep)
	keep, ve2Lo, ve2Hi := d.keep, d.ve2Lo, d.ve2Hi
	unbound := 0
	inf := math.Inf(1)
	sLo, sHi, rLo, rHi, tLo, tHi := inf, -inf, inf, -inf, inf, -inf
	// l is los.at written out on scalars: Go keeps arrays in memory, and
	// this loop does most of a star's arithmetic.
	// The slices as locals of one length: no reloads through w and no
	// bounds checks in the loop.
	l := &d.los
	n := d.kept
	dist, pmRAs, pmDecs, rvs := w.dist[:n], w.pmRA[:n], w.pmDec[:n], w.rv[:n]
	speed2, rgc2, vrad2, vtan2, vesc2, unb := w.speed2[:n], w.rgc2[:n], w.vrad2[:n], w.vtan2[:n], w.vesc2[:n], w.unbound[:n]
	for i := range n {
		dKpc, pmRA, pmDec, rv := dist[i], pmRAs[i], pmDecs[i], rvs[i]
		x := l.pos0[0] + dKpc*l.posR[0]
		y := l.pos0[1] + dKpc*l.posR[1]
		z := l.pos0[2] + dKpc*l.posR[2]
		vx := l.vel0[0] + rv*l.velR[0] + dKpc*(pmRA*l.velA[0]+pmDec*l.velD[0])
		vy := l.vel0[1] + rv*l.velR[1] + dKpc*(pmRA*l.velA[1]+pmDec*l.velD[1])
		vz := l.vel0[2] + rv*l.velR[2] + dKpc*(pmRA*l.velA[2]+pmDec*l.velD[2])
		r2, v2, pv := x*x+y*y+z*z, vx*vx+vy*vy+vz*vz, x*vx+y*vy+z*vz
		ub := false
		switch {
		case v2 > ve2Hi: // faster than v_esc anywhere on the table
			ub = true
		case v2 <= ve2Lo: // bound everywhere on the table
		default:
			var ve2 float64
			if w.esc.ok {
				ve2 = w.esc.vesc2(dKpc)
			} else {
				ve2 = escapeSpeed2(p, [3]float64{x, y, z}, math.Sqrt(r2), set.EscapeRadiusKpc)
			}
			vesc2[i] = ve2
			ub = v2 > ve2 // v > v_esc
		}
		if ub {
			unbound++
		}
		unb[i] = ub
		vr2 := pv * pv / r2 // v_r = pos.vel / r_gc
		vr2s, vt2 := math.Copysign(vr2, pv), max(0, v2-vr2)
		speed2[i], rgc2[i] = v2, r2
		vrad2[i], vtan2[i] = vr2s, vt2
		// The spans the percentiles need, while the values are in
		// registers (min and max are exact and independent of order).
		sLo, sHi = min(sLo, v2), max(sHi, v2)
		rLo, rHi = min(rLo, vr2s), max(rHi, vr2s)
		tLo, tHi = min(tLo, vt2), max(tHi, vt2)
		if i < keep {
			r.SamplePos[i], r.SampleVel[i] = [3]float64{x, y, z}, [3]float64{vx, vy, vz}
		}
	}
	d.unbound = unbound
	d.speed2Span, d.vrad2Span, d.vtan2Span = [2]float64{sLo, sHi}, [2]float64{rLo, rHi}, [2]float64{tLo, tHi}
}

// summarise reweights the draws by the velocity prior when there is one
// (applyPrior; only with a radial velocity) and stores the percentiles of
// distance and speed, the medians of r_gc, v_esc, v_r and v_tan, and the
// unbound share: p_unbound with a radial velocity, its lower bound without.
func (w *worker) summarise(set *Settings, d *starDraws, r *Result) {
	kept := d.kept
	pUnbound := float64(d.unbound) / float64(kept)
	r.EffectiveSamples = float64(kept)
	rgcMonotone, rgcInc := d.los.r2Monotone(d.dMinKpc, d.dMaxKpc)
	// The spans found so far hold until the prior resamples the draws.
	distSpan := [2]float64{d.dMinKpc, d.dMaxKpc}
	speed2Span, vrad2Span, vtan2Span := d.speed2Span, d.vrad2Span, d.vtan2Span
	if r.HasRV && set.VelocityPriorKms > 0 {
		r.PUnboundFlat = pUnbound
		pUnbound, r.EffectiveSamples = w.applyPrior(set.VelocityPriorKms, kept, d.keep, d.speed2Span[0], !rgcMonotone, !d.escMonotone, &d.los, r)
		distSpan[0], distSpan[1] = span(w.dist[:kept])
		speed2Span[0], speed2Span[1] = span(w.speed2[:kept])
		vrad2Span[0], vrad2Span[1] = span(w.vrad2[:kept])
		vtan2Span[0], vtan2Span[1] = span(w.vtan2[:kept])
	}
	q := &w.quant
	var mid middle
	r.DistKpc, mid = q.percentilesMidIn(w.dist[:kept], distSpan[0], distSpan[1], nil)
	// r_gc and, when its table is monotone, v_esc are monotone functions
	// of the distance for most stars: their medians then follow from the
	// distance's middle order statistics without a selection.
	if rgcMonotone {
		r.RGCKpc = medianOfMonotone(d.los.r2At, mid, rgcInc, math.Sqrt)
	} else {
		r.RGCKpc = q.median(w.rgc2[:kept], math.Sqrt)
	}
	if d.escMonotone {
		r.VEscKms = medianOfMonotone(w.esc.vesc2, mid, w.esc.monotone > 0, math.Sqrt)
	} else { // every draw looked up
		r.VEscKms = q.median(w.vesc2[:kept], math.Sqrt)
	}
	if r.HasRV {
		r.SpeedKms = q.percentilesIn(w.speed2[:kept], speed2Span[0], speed2Span[1], math.Sqrt)
		r.VRadialKms = q.medianIn(w.vrad2[:kept], vrad2Span[0], vrad2Span[1], signedSqrt)
		r.VTangentialKms = q.medianIn(w.vtan2[:kept], vtan2Span[0], vtan2Span[1], math.Sqrt)
		r.PUnbound = pUnbound
	} else {
		r.SpeedLowerKms = q.percentilesIn(w.speed2[:kept], speed2Span[0], speed2Span[1], math.Sqrt)
		r.PUnboundLower = pUnbound
	}
}

// signedSqrt undoes x -> x |x|.
func signedSqrt(x float64) float64 { return math.Copysign(math.Sqrt(math.Abs(x)), x) }

// drawTabled fills dist, plx, pmRA and pmDec of draws lo..hi-1. The
// distance r comes from the tabulated posterior (EDSD, or a catalog
// distance weighed by the parallax) or is the fixed pointKpc; the proper
// motions from their normal conditional on the true parallax 1/r:
//
//	mu | w = mu_obs + S_mw / S_ww (1/r - w_obs),  cov S_mm - S_mw S_wm / S_ww
//
// (conditional of a multivariate normal, e.g. Anderson 2003, An Introduction
// to Multivariate Statistical Analysis, 3rd ed., theorem 2.5.1). With a flat
// prior on the true proper motions this is the exact joint posterior of
// (r, mu): the marginal of r is the EDSD posterior of the parallax alone, and
// the parallax-pm correlations survive in the draws.
func (w *worker) drawTabled(dr *drawing, lo, hi int) {
	// All distances of the block first, then the proper motions: the
	// table lookups of a tight loop overlap in the processor, interleaved
	// with the normal draws they wait on each other.
	for i := lo; i < hi; i++ {
		w.dist[i] = dr.pointKpc
		if dr.tabled {
			w.dist[i] = w.table.quantile(w.rnd.float64())
		}
	}
	if dr.cond.nAct == 2 {
		w.drawPMs2(&dr.pm, lo, hi, dr.wObs, dr.mean, dr.beta, &dr.cond)
		return
	}
	for i := lo; i < hi; i++ {
		w.drawPM(&dr.pm, i, w.dist[i], dr.wObs, dr.mean, dr.beta, &dr.cond)
	}
}

// drawPMs2 is drawPM for draws lo..hi-1 when both proper motions have an
// uncertainty: the normals of the calls of g.draw first, then the same
// arithmetic.
func (w *worker) drawPMs2(rnd *stream, lo, hi int, wObs float64, mean [3]float64, beta [2]float64, g *gauss) {
	z := w.z[:2*(hi-lo)]
	rnd.normals(z)
	dist, plxs, pmRA, pmDec := w.dist[lo:hi], w.plx[lo:hi], w.pmRA[lo:hi], w.pmDec[lo:hi]
	l, m := &g.lower, g.mean
	for i, d := range dist {
		zi := z[2*i : 2*i+2 : 2*i+2]
		z0, z1 := zi[0], zi[1]
		x0 := m[0] + l[0][0]*z0
		x1 := m[1] + (l[1][0]*z0 + l[1][1]*z1)
		plx := 1 / d
		plxs[i] = plx
		pmRA[i] = mean[1] + beta[0]*(plx-wObs) + x0
		pmDec[i] = mean[2] + beta[1]*(plx-wObs) + x1
	}
}

// drawPM stores distance d and proper motions drawn from rnd from their
// normal conditional on the true parallax 1/d in draw i.
func (w *worker) drawPM(rnd *stream, i int, d, wObs float64, mean [3]float64, beta [2]float64, g *gauss) {
	plx := 1 / d
	var x [3]float64
	g.draw(rnd, &x)
	w.dist[i], w.plx[i] = d, plx
	w.pmRA[i] = mean[1] + beta[0]*(plx-wObs) + x[0]
	w.pmDec[i] = mean[2] + beta[1]*(plx-wObs) + x[1]
}

// maxCatalogTries: a catalog distance of which the parallax admits less
// than 1/maxCatalogTries fails the star (the rejection sampler this
// replaced gave up after maxCatalogTries tries per draw).
const maxCatalogTries = 200

// catalogConflictShare: below this share of the catalog distance admitted
// by the parallax the star gets a ReasonPlxConflict note.
const catalogConflictShare = 0.05

// conditionalPM returns the regression of the proper motions on the
// parallax and a sampler of their conditional normal; joint is the sampler
// of (parallax, pm_ra, pm_dec) with covariance cov.
func conditionalPM(cov *[3][3]float64, joint *gauss) ([2]float64, gauss) {
	var beta [2]float64
	if cov[0][0] > 0 {
		for i := range 2 {
			beta[i] = cov[0][i+1] / cov[0][0]
		}
	}
	return beta, joint.conditionalOnFirst()
}

func growVec(b [][3]float64, n int) [][3]float64 {
	if cap(b) >= n {
		return b[:n]
	}
	return make([][3]float64, n)
}

// applyPrior reweights the first kept draws by the velocity prior
// (prior.go), replaces them by the equal-weight resample where they are
// used later (r_gc^2 and v_esc^2 only when their medians need the draws),
// takes the traced draws spread evenly over it (the resample is in draw
// order) and returns the weighted unbound share and the effective sample
// size; minSpeed2 is the smallest speed^2 of the draws.
func (w *worker) applyPrior(sigmaKms float64, kept, keep int, minSpeed2 float64, needRGC, needVesc bool, los *lineOfSight, r *Result) (pUnbound, ess float64) {
	idx := w.idx[:kept]
	pu, ess := priorResampleMin(w.speed2[:kept], minSpeed2, w.unbound[:kept], sigmaKms, w.rndV.float64(), w.wt[:kept], idx)
	for i := range keep {
		j := idx[i*kept/keep]
		r.SamplePos[i], r.SampleVel[i] = los.at(w.dist[j], w.pmRA[j], w.pmDec[j], w.rv[j])
	}
	for _, x := range [][]float64{w.dist, w.speed2, w.vrad2, w.vtan2} {
		gather(x, w.tmp, idx)
	}
	if needRGC {
		gather(w.rgc2, w.tmp, idx)
	}
	if needVesc {
		gather(w.vesc2, w.tmp, idx)
	}
	if ess < minPriorESSShare*float64(kept) {
		r.note(ReasonPriorDominated, "the velocity prior (%g km/s) leaves an effective sample size of %.0f of %d draws: the data constrain the velocity poorly", sigmaKms, ess, kept)
	}
	return pu, ess
}
