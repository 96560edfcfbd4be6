package crossmatch

import "math"

// auPerYrKms is A = 4.740470446 km/s, one au per Julian year (IAU 2012 au =
// 149597870.7 km; Julian year = 365.25 d). A radial velocity vr (km/s) at
// parallax p (mas) is a "radial proper motion" vr * p / A in mas/yr
// (ESA 1997, ESA SP-1200, Vol. 1, Sect. 1.2.8).
const auPerYrKms = 4.740470446

// astrometry is the private mirror of the propagation input; it has the
// fields of sky.Astrometry so the switch to sky.Propagate is one line.
type astrometry struct {
	RADeg, DecDeg, ParallaxMas, PMRAMasYr, PMDecMasYr, RVKms float64
}

// propagate moves a position from epoch fromJyr to toJyr with the linear
// space-motion model (rectilinear motion at constant velocity; ESA 1997,
// SP-1200, Vol. 1, Sect. 1.2.8; light-time neglected):
// with unit vector p, tangent vectors pHat (east) and qHat (north), the
// direction at t is u = p + (pmRA pHat + pmDec qHat + muR p) dt normalised,
// muR = rv * parallax / A. Without parallax or rv, muR = 0 and the star
// moves along its great circle by atan(mu dt), which differs from mu dt by
// (mu dt)^3/3: 6e-5 arcsec for 200 arcsec of motion. Rows without a proper
// motion are not moved (ok = false).
//
// This is a private shim standing in for sky.Propagate until it lands.
func propagate(a astrometry, fromJyr, toJyr float64) (raDeg, decDeg float64, ok bool) {
	if math.IsNaN(a.PMRAMasYr) || math.IsNaN(a.PMDecMasYr) {
		return a.RADeg, a.DecDeg, false
	}
	dt := toJyr - fromJyr
	if dt == 0 {
		return a.RADeg, a.DecDeg, true
	}
	sa, ca := math.Sincos(a.RADeg * radPerDeg)
	sd, cd := math.Sincos(a.DecDeg * radPerDeg)
	p := [3]float64{cd * ca, cd * sa, sd}
	east := [3]float64{-sa, ca, 0}
	north := [3]float64{-sd * ca, -sd * sa, cd}
	muR := 0.0
	if !math.IsNaN(a.ParallaxMas) && !math.IsNaN(a.RVKms) && a.ParallaxMas > 0 {
		muR = a.RVKms * a.ParallaxMas / auPerYrKms // mas/yr
	}
	fe := a.PMRAMasYr * radPerMas * dt
	fn := a.PMDecMasYr * radPerMas * dt
	fr := 1 + muR*radPerMas*dt
	var u [3]float64
	for k := range u {
		u[k] = fr*p[k] + fe*east[k] + fn*north[k]
	}
	raDeg = math.Atan2(u[1], u[0]) * degPerRad
	decDeg = math.Atan2(u[2], math.Hypot(u[0], u[1])) * degPerRad
	return normRA(raDeg), decDeg, true
}
