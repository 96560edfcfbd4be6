package report

import "math"

// HammerAitoff maps Galactic longitude and latitude (radians, l in
// (-pi, pi]) to the equal-area Hammer-Aitoff plane: x in [-2 sqrt 2,
// 2 sqrt 2], y in [-sqrt 2, sqrt 2]: x = 2 sqrt2 cos b sin(l/2) / D,
// y = sqrt2 sin b / D, D = sqrt(1 + cos b cos(l/2)) (the AIT projection of
// Calabretta & Greisen 2002, A&A 395, 1077, with unit radius; cited from
// memory, the tests check its analytic identities). x grows with l; the
// plots negate it so that longitude increases to the left.
func HammerAitoff(lRad, bRad float64) (x, y float64) {
	d := math.Sqrt(1 + math.Cos(bRad)*math.Cos(lRad/2))
	return 2 * math.Sqrt2 * math.Cos(bRad) * math.Sin(lRad/2) / d, math.Sqrt2 * math.Sin(bRad) / d
}

// wrapLon maps a longitude in radians to (-pi, pi].
func wrapLon(lRad float64) float64 {
	l := math.Mod(lRad, 2*math.Pi)
	if l > math.Pi {
		l -= 2 * math.Pi
	} else if l <= -math.Pi {
		l += 2 * math.Pi
	}
	return l
}
