package sky

import "math"

const twoPi = 2 * math.Pi

// Separation returns the angle between two directions (radians in, radians
// out) with the Vincenty formula (Vincenty 1975, Survey Review 23, 88,
// special case of a sphere), accurate from micro-arcseconds to pi.
func Separation(ra1, dec1, ra2, dec2 float64) float64 {
	sd1, cd1 := math.Sincos(dec1)
	sd2, cd2 := math.Sincos(dec2)
	sdr, cdr := math.Sincos(ra2 - ra1)
	num1 := cd2 * sdr
	num2 := cd1*sd2 - sd1*cd2*cdr
	den := sd1*sd2 + cd1*cd2*cdr
	return math.Atan2(math.Hypot(num1, num2), den)
}

// PositionAngle returns the position angle of direction 2 seen from
// direction 1 (radians in), measured from north through east, in [0, 2pi).
// Coincident directions give 0; from a pole, north is taken along the
// meridian ra1 (so the angle is pi - (ra2 - ra1) from the north pole).
// Formula: the sine and four-parts formulae of spherical
// trigonometry (Smart 1977, Textbook on Spherical Astronomy, 6th ed.),
// combined with atan2; ERFA eraPas uses the same form.
func PositionAngle(ra1, dec1, ra2, dec2 float64) float64 {
	sd1, cd1 := math.Sincos(dec1)
	sd2, cd2 := math.Sincos(dec2)
	sdr, cdr := math.Sincos(ra2 - ra1)
	y := sdr * cd2
	x := cd1*sd2 - sd1*cd2*cdr
	if x == 0 && y == 0 {
		return 0
	}
	return wrapTwoPi(math.Atan2(y, x))
}

// UnitVector returns the Cartesian unit vector of (ra, dec) in radians, in
// the frame of the coordinates (x toward ra=0 dec=0, z toward dec=+90 deg).
func UnitVector(raRad, decRad float64) [3]float64 {
	sd, cd := math.Sincos(decRad)
	sa, ca := math.Sincos(raRad)
	return [3]float64{cd * ca, cd * sa, sd}
}

// FromUnitVector returns (ra, dec) in radians, ra in [0, 2pi), of a vector of
// any non-zero length. The zero vector gives (0, 0); a vector along the z
// axis gives ra = 0.
func FromUnitVector(v [3]float64) (raRad, decRad float64) {
	rxy := math.Hypot(v[0], v[1])
	if rxy == 0 {
		if v[2] == 0 {
			return 0, 0
		}
		return 0, math.Copysign(math.Pi/2, v[2])
	}
	return wrapTwoPi(math.Atan2(v[1], v[0])), math.Atan2(v[2], rxy)
}

// wrapTwoPi maps an angle in radians into [0, 2pi).
func wrapTwoPi(a float64) float64 {
	if a >= 0 && a < twoPi {
		return a
	}
	a = math.Mod(a, twoPi)
	if a < 0 {
		a += twoPi
	}
	if a >= twoPi { // -tiny + 2pi rounds to 2pi
		a = 0
	}
	return a
}

// wrapDeg360 maps an angle in degrees into [0, 360).
func wrapDeg360(a float64) float64 {
	if a >= 0 && a < 360 {
		return a
	}
	a = math.Mod(a, 360)
	if a < 0 {
		a += 360
	}
	if a >= 360 {
		a = 0
	}
	return a
}
