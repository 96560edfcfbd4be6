package sky

import "math"

// Separation returns the angle between two directions (radians in, radians
// out) with the Vincenty formula, accurate from micro-arcseconds to pi.
func Separation(ra1, dec1, ra2, dec2 float64) float64 {
	sd1, cd1 := math.Sincos(dec1)
	sd2, cd2 := math.Sincos(dec2)
	sdr, cdr := math.Sincos(ra2 - ra1)
	num1 := cd2 * sdr
	num2 := cd1*sd2 - sd1*cd2*cdr
	den := sd1*sd2 + cd1*cd2*cdr
	return math.Atan2(math.Hypot(num1, num2), den)
}
