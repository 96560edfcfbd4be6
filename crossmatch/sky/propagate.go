package sky

import (
	"math"

	"starvet/internal/units"
	"starvet/internal/vec"
)

// Astrometry is one star's astrometric state at some epoch. NaN marks an
// unknown value. PMRAMasYr is mu_alpha* = mu_alpha cos(dec).
type Astrometry struct {
	RADeg, DecDeg         float64 // ICRS, degrees
	ParallaxMas           float64 // mas
	PMRAMasYr, PMDecMasYr float64 // mas/yr
	RVKms                 float64 // km/s, positive receding
}

// Constants of the rigorous path, with the values ERFA uses (erfam.h, from
// IAU 2012 Resolution B2 for the au and the SI defining speed of light).
const (
	speedLight = 299792458.0 // m/s
	auLightSec = units.AuM / speedLight
	lightAUDay = units.DaySec / auLightSec // speed of light, au/day
	kmsToAUDay = units.DaySec * 1e3 / units.AuM
)

// Limits taken over from ERFA eraPmsafe and eraStarpv so that the rigorous
// path behaves the same way for tiny parallaxes and extreme speeds.
const (
	pmsafeMinParallaxAs = 5e-7  // eraPmsafe PXMIN, arcsec
	pmsafeSpeedFactor   = 326.0 // eraPmsafe F: parallax >= F*pm caps the transverse speed near 1% c
	starpvMinParallaxAs = 1e-7  // eraStarpv PXMIN, arcsec
	starpvMaxBeta       = 0.5   // eraStarpv VMAX, fraction of c
	starpvMaxIter       = 100   // eraStarpv IMAX
)

// Propagate returns a moved from epoch fromJyr to epoch toJyr (Julian years,
// e.g. 2019.5). The result's RADeg is in [0, 360).
//
// With a positive parallax and a known radial velocity it uses rigorous
// straight-line space motion including the light-time and special
// relativistic corrections, equivalent to ERFA eraPmsafe (which calls
// eraStarpm; IAU SOFA Board, SOFA Astrometry Tools, 2021; the relativistic
// treatment follows Stumpff 1985, A&A 144, 232, as SOFA cites), including its
// override of tiny parallaxes: a parallax below 326 x the yearly motion
// (transverse speed above ~1% c) or below 0.5 micro-arcsec is raised to that
// bound for the computation. It returns the new parallax and radial velocity
// too. When the parallax was raised, the returned parallax is the input
// value scaled by the modelled distance change, so no invented parallax
// leaks out; such stars do not round-trip exactly (each call re-derives the
// raised parallax from the proper motion of its own epoch; the tests see up
// to ~1 mas over 200 yr for stars moving ~3 arcsec/yr, and tens of mas
// within ~|mu| x 1 yr of a pole, where ERFA's estimate of the yearly motion
// breaks down).
//
// Otherwise it moves the position along the great circle in the direction
// of the proper motion by |mu| (toJyr - fromJyr), which stays correct across
// the poles, and rotates the proper motion vector along; parallax and radial
// velocity are returned unchanged. The great-circle path is also the
// fallback for the (unphysical) inputs ERFA refuses, a speed reaching c.
//
// Unknown position or proper motion (either component NaN) returns a
// unchanged, apart from wrapping RADeg. Epochs must be finite (a NaN epoch
// gives a NaN position); callers validate them where they are read.
func Propagate(a Astrometry, fromJyr, toJyr float64) Astrometry {
	a.RADeg = wrapDeg360(a.RADeg)
	if math.IsNaN(a.RADeg) || math.IsNaN(a.DecDeg) || math.IsNaN(a.PMRAMasYr) || math.IsNaN(a.PMDecMasYr) || fromJyr == toJyr {
		return a
	}
	if a.ParallaxMas > 0 && !math.IsNaN(a.RVKms) && !math.IsInf(a.ParallaxMas, 0) && !math.IsInf(a.RVKms, 0) {
		if out, ok := propagateSpace(a, (toJyr-fromJyr)*units.JulianYearDay); ok {
			return out
		}
	}
	return propagateSphere(a, toJyr-fromJyr)
}

// basis returns the unit vectors toward the star (r), east (p) and north (q).
func basis(raRad, decRad float64) (r, p, q [3]float64) {
	sd, cd := math.Sincos(decRad)
	sa, ca := math.Sincos(raRad)
	return [3]float64{cd * ca, cd * sa, sd}, [3]float64{-sa, ca, 0}, [3]float64{-sd * ca, -sd * sa, cd}
}

// axesOf returns the east (p) and north (q) unit vectors at the direction of
// the unit vector r without trigonometry; on the z axis it uses ra = 0, as
// FromUnitVector does.
func axesOf(r [3]float64) (p, q [3]float64) {
	rxy := math.Hypot(r[0], r[1])
	if rxy == 0 {
		return [3]float64{0, 1, 0}, [3]float64{-math.Copysign(1, r[2]), 0, 0}
	}
	cx, sy := r[0]/rxy, r[1]/rxy
	return [3]float64{-sy, cx, 0}, [3]float64{-r[2] * cx, -r[2] * sy, rxy}
}

// propagateSphere moves along the great circle through the start in the
// direction of the proper motion (a rotation in the plane of r and the unit
// motion direction u): r' = r cos d + u sin d, u' = -r sin d + u cos d.
func propagateSphere(a Astrometry, dtYr float64) Astrometry {
	muMas := math.Hypot(a.PMRAMasYr, a.PMDecMasYr)
	if muMas == 0 {
		return a
	}
	r, p, q := basis(a.RADeg*units.RadPerDeg, a.DecDeg*units.RadPerDeg)
	ue, un := a.PMRAMasYr/muMas, a.PMDecMasYr/muMas
	sd, cd := math.Sincos(muMas * units.RadPerMas * dtYr)
	var r2, u2 [3]float64
	for i := range 3 {
		u := ue*p[i] + un*q[i]
		r2[i] = r[i]*cd + u*sd
		u2[i] = -r[i]*sd + u*cd
	}
	raRad, decRad := FromUnitVector(r2)
	p2, q2 := axesOf(r2)
	a.RADeg = wrapDeg360(raRad * units.DegPerRad)
	a.DecDeg = decRad * units.DegPerRad
	a.PMRAMasYr = muMas * vec.Dot(u2, p2)
	a.PMDecMasYr = muMas * vec.Dot(u2, q2)
	return a
}

// propagateSpace follows ERFA eraPmsafe -> eraStarpm (eraStarpv, straight
// line motion with light time, eraPvstar) step by step, in au and au/day.
// It reports false where ERFA would fail (speed of light reached). It
// stays one function so that it reads against ERFA step by step and keeps
// ERFA's order of operations, which the agreement with ERFA rests on.
func propagateSpace(a Astrometry, dtDay float64) (Astrometry, bool) {
	raRad, decRad := a.RADeg*units.RadPerDeg, a.DecDeg*units.RadPerDeg
	pmRARad := a.PMRAMasYr * units.RadPerMas // mu_alpha*, rad/yr
	pmDecRad := a.PMDecMasYr * units.RadPerMas

	// eraPmsafe: raise the parallax so that the transverse speed stays
	// below about 1% c, and to at least PXMIN. Like ERFA, size the yearly
	// motion with eraSeps from (ra, dec) to (ra + dRA/dt, dec + dDec/dt);
	// that equals |mu| to second order but not within ~|mu| x 1 yr of a
	// pole, and we keep ERFA's value there so that results agree.
	// The eraSeps value never exceeds |mu_alpha*| + |mu_delta| (the path
	// along the parallel, then the meridian, is no shorter than the great
	// circle), so it is only needed when that bound could trigger the rule.
	pxAs := a.ParallaxMas / 1000
	usedPxAs := pxAs
	if pxAs < pmsafeSpeedFactor*(math.Abs(pmRARad)+math.Abs(pmDecRad)) {
		pmYr := Separation(raRad, decRad, raRad+pmRARad/math.Cos(decRad), decRad+pmDecRad)
		if math.IsNaN(pmYr) || math.IsInf(pmYr, 0) {
			pmYr = math.Hypot(pmRARad, pmDecRad)
		}
		if usedPxAs < pmsafeSpeedFactor*pmYr {
			usedPxAs = pmsafeSpeedFactor * pmYr
		}
	}
	if usedPxAs < pmsafeMinParallaxAs {
		usedPxAs = pmsafeMinParallaxAs
	}

	// eraStarpv: catalogue values to the inertial space motion.
	w := usedPxAs
	if w < starpvMinParallaxAs {
		w = starpvMinParallaxAs
	}
	distAU := 1 / (w * units.RadPerArcsec)
	rdAUDay := a.RVKms * kmsToAUDay
	r, p, q := basis(raRad, decRad)
	var pos, vel [3]float64
	for i := range 3 {
		pos[i] = distAU * r[i]
		// Transverse velocity: distance x proper motion (rad/day).
		vel[i] = distAU*(pmRARad*p[i]+pmDecRad*q[i])/units.JulianYearDay + rdAUDay*r[i]
	}
	if vec.Dot(vel, vel)/(lightAUDay*lightAUDay) > starpvMaxBeta*starpvMaxBeta {
		vel = [3]float64{}
	}
	vsr := vec.Dot(r, vel) // radial part, along the unit vector r
	var ust [3]float64
	for i := range 3 {
		ust[i] = vel[i] - vsr*r[i]
	}
	vst := math.Sqrt(vec.Dot(ust, ust))
	betsr, betst := vsr/lightAUDay, vst/lightAUDay
	// Observed-to-inertial correction: the fixed-point iteration of
	// eraStarpv, with its stopping rule.
	bett, betr := betst, betsr
	var d, del, od, odel, odd, oddel float64
	for i := range starpvMaxIter {
		d = 1 + betr
		ww := betr*betr + bett*bett
		del = -ww / (math.Sqrt(1-ww) + 1)
		betr = d*betsr + del
		bett = d * betst
		if i > 0 {
			dd := math.Abs(d - od)
			ddel := math.Abs(del - odel)
			if i > 1 && dd >= odd && ddel >= oddel {
				break
			}
			odd, oddel = dd, ddel
		}
		od, odel = d, del
	}
	wr := 1.0
	if betsr != 0 {
		wr = d + del/betsr
	}
	for i := range 3 {
		vel[i] = wr*vsr*r[i] + d*ust[i]
	}

	// eraStarpm: light time at the start, move to the geometric position at
	// the end, light time there, then move to the observed place at the end.
	tl1 := math.Sqrt(vec.Dot(pos, pos)) / lightAUDay
	var g [3]float64
	for i := range 3 {
		g[i] = pos[i] + (dtDay+tl1)*vel[i]
	}
	r2 := vec.Dot(g, g)
	rdv := vec.Dot(g, vel)
	c2mv2 := lightAUDay*lightAUDay - vec.Dot(vel, vel)
	if c2mv2 <= 0 {
		return a, false
	}
	tl2 := (-rdv + math.Sqrt(rdv*rdv+c2mv2*r2)) / c2mv2
	var pos2 [3]float64
	for i := range 3 {
		pos2[i] = pos[i] + (dtDay+(tl1-tl2))*vel[i]
	}

	// eraPvstar: inertial to observed velocity, then to catalogue values.
	dist2 := math.Sqrt(vec.Dot(pos2, pos2))
	if dist2 == 0 {
		return a, false
	}
	var x [3]float64
	for i := range 3 {
		x[i] = pos2[i] / dist2
	}
	vr := vec.Dot(x, vel)
	var ut [3]float64
	for i := range 3 {
		ut[i] = vel[i] - vr*x[i]
	}
	bt, br := math.Sqrt(vec.Dot(ut, ut))/lightAUDay, vr/lightAUDay
	d2 := 1 + br
	w2 := br*br + bt*bt
	if d2 == 0 || w2 >= 1 {
		return a, false
	}
	del2 := -w2 / (math.Sqrt(1-w2) + 1)
	var vobs [3]float64
	for i := range 3 {
		vobs[i] = ut[i]/d2 + lightAUDay*(br-del2)/d2*x[i]
	}
	ra2, dec2 := FromUnitVector(pos2)
	p2, q2 := axesOf(x)
	out := a
	out.RADeg = wrapDeg360(ra2 * units.DegPerRad)
	out.DecDeg = dec2 * units.DegPerRad
	out.PMRAMasYr = vec.Dot(vobs, p2) / dist2 * units.JulianYearDay / units.RadPerMas
	out.PMDecMasYr = vec.Dot(vobs, q2) / dist2 * units.JulianYearDay / units.RadPerMas
	out.RVKms = vec.Dot(vobs, x) / kmsToAUDay
	// Parallax in the same proportion as the modelled distance change.
	out.ParallaxMas = a.ParallaxMas * distAU / dist2
	return out, true
}
