package frames

import (
	"math"

	"starvet/internal/units"
	"starvet/internal/vec"
)

// Defining angles of the Galactic frame (ESA 1997, The Hipparcos and Tycho
// Catalogues, ESA SP-1200, Vol. 1, section 1.5.3):
// the north Galactic pole at (alpha, delta) = (192.85948, +27.12825) deg and
// the Galactic longitude of the north celestial pole, 122.93192 deg.
const (
	ngpRADeg  = 192.85948
	ngpDecDeg = 27.12825
	ncpLonDeg = 122.93192
)

// ICRSToGal is the rotation matrix taking ICRS Cartesian components to
// Galactic ones (x toward l=0,b=0; y toward l=90 deg; z toward the north
// Galactic pole). Rows are the Galactic axes expressed in ICRS.
var ICRSToGal = galacticMatrix()

func galacticMatrix() [3][3]float64 {
	a, d, t := ngpRADeg*units.RadPerDeg, ngpDecDeg*units.RadPerDeg, ncpLonDeg*units.RadPerDeg
	// z axis: the north Galactic pole.
	z := [3]float64{math.Cos(d) * math.Cos(a), math.Cos(d) * math.Sin(a), math.Sin(d)}
	// The north celestial pole has Galactic longitude t: in Galactic
	// components it is (cos b cos t, cos b sin t, sin b) with sin b = z_ncp.
	// Solve the x and y axes from that and orthonormality.
	ncp := [3]float64{0, 0, 1}
	// Component of the NCP perpendicular to z, normalised.
	dot := z[2]
	p := [3]float64{ncp[0] - dot*z[0], ncp[1] - dot*z[1], ncp[2] - dot*z[2]}
	n := math.Sqrt(p[0]*p[0] + p[1]*p[1] + p[2]*p[2])
	p = [3]float64{p[0] / n, p[1] / n, p[2] / n}
	q := cross(z, p) // 90 deg ahead of p in longitude
	// p is at longitude t: x = cos t p - sin t q, y = sin t p + cos t q.
	st, ct := math.Sincos(t)
	var x, y [3]float64
	for i := range 3 {
		x[i] = ct*p[i] - st*q[i]
		y[i] = st*p[i] + ct*q[i]
	}
	return [3][3]float64{x, y, z}
}

func cross(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

// Rotate applies a 3x3 matrix to a vector.
func Rotate(m *[3][3]float64, v [3]float64) [3]float64 {
	return [3]float64{
		m[0][0]*v[0] + m[0][1]*v[1] + m[0][2]*v[2],
		m[1][0]*v[0] + m[1][1]*v[1] + m[1][2]*v[2],
		m[2][0]*v[0] + m[2][1]*v[1] + m[2][2]*v[2],
	}
}

// ICRSToGalactic converts ICRS (ra, dec) to Galactic (l, b); radians.
func ICRSToGalactic(raRad, decRad float64) (lRad, bRad float64) {
	sd, cd := math.Sincos(decRad)
	sa, ca := math.Sincos(raRad)
	g := Rotate(&ICRSToGal, [3]float64{cd * ca, cd * sa, sd})
	lRad = math.Atan2(g[1], g[0])
	if lRad < 0 {
		lRad += 2 * math.Pi
	}
	return lRad, math.Atan2(g[2], math.Hypot(g[0], g[1]))
}

// GalacticToICRS converts Galactic (l, b) to ICRS (ra, dec); radians, ra in
// [0, 2pi). It applies the transpose of ICRSToGal.
func GalacticToICRS(lRad, bRad float64) (raRad, decRad float64) {
	sb, cb := math.Sincos(bRad)
	sl, cl := math.Sincos(lRad)
	e := rotateT(&ICRSToGal, [3]float64{cb * cl, cb * sl, sb})
	raRad = math.Atan2(e[1], e[0])
	if raRad < 0 {
		raRad += 2 * math.Pi
	}
	return raRad, math.Atan2(e[2], math.Hypot(e[0], e[1]))
}

// rotateT applies the transpose (the inverse, for a rotation) of m.
func rotateT(m *[3][3]float64, v [3]float64) [3]float64 {
	return [3]float64{
		m[0][0]*v[0] + m[1][0]*v[1] + m[2][0]*v[2],
		m[0][1]*v[0] + m[1][1]*v[1] + m[2][1]*v[2],
		m[0][2]*v[0] + m[1][2]*v[1] + m[2][2]*v[2],
	}
}

// Basis is the local triad of a line of sight, in heliocentric Galactic
// Cartesian components: R toward the star, P toward increasing ra, Q toward
// increasing dec.
type Basis struct{ R, P, Q [3]float64 }

// NewBasis returns the triad for the ICRS direction (ra, dec) in radians.
func NewBasis(raRad, decRad float64) Basis {
	sd, cd := math.Sincos(decRad)
	sa, ca := math.Sincos(raRad)
	return Basis{
		R: Rotate(&ICRSToGal, [3]float64{cd * ca, cd * sa, sd}),
		P: Rotate(&ICRSToGal, [3]float64{-sa, ca, 0}),
		Q: Rotate(&ICRSToGal, [3]float64{-sd * ca, -sd * sa, cd}),
	}
}

// Sun holds the Solar parameters that place the heliocentric frame in the
// Galactocentric one.
type Sun struct {
	DistanceKpc float64    // Sun to Galactic Centre
	HeightPc    float64    // height above the Galactic plane
	VelocityKms [3]float64 // Sun's velocity in the Galactocentric frame
}

// DefaultSun returns the Solar parameters starvet uses unless a run says
// otherwise.
func DefaultSun() Sun {
	return Sun{
		// Distance to the Galactic Centre: GRAVITY Collaboration 2018,
		// A&A 615, L15 (R0 = 8.122 kpc).
		DistanceKpc: 8.122,
		// Height above the plane: Bennett & Bovy 2019, MNRAS 482, 1417
		// (z_sun = 20.8 pc).
		HeightPc: 20.8,
		// Velocity (U, V, W) in the Galactocentric frame: Drimmel &
		// Poggio 2018, RNAAS 2, 210 (12.9, 245.6, 7.78) km/s.
		VelocityKms: [3]float64{12.9, 245.6, 7.78},
	}
}

// tilt returns sin and cos of the angle asin(z_sun/R0) by which the
// heliocentric Galactic frame is rotated about y to lift the Sun to z_sun.
func (s Sun) tilt() (st, ct float64) {
	st = s.HeightPc / 1000 / s.DistanceKpc
	return st, math.Sqrt(1 - st*st)
}

// ToGalactocentric returns the Galactocentric Cartesian position (kpc) and
// velocity (km/s) of a star on the line of sight b at distKpc with proper
// motions pmRAMasYr (mu_alpha*) and pmDecMasYr and radial velocity rvKms.
// The frame: x from the Sun's projection toward the centre (the Sun is at
// x < 0), y along Galactic rotation, z toward the north Galactic pole. The
// heliocentric Galactic frame is tilted about y by asin(z_sun/R0) so that the
// Sun sits at height z_sun.
func (s Sun) ToGalactocentric(b Basis, distKpc, pmRAMasYr, pmDecMasYr, rvKms float64) (pos, vel [3]float64) {
	st, ct := s.tilt()
	k := units.KmsPerMasYrKpc * distKpc
	var r, v [3]float64
	for i := range 3 {
		r[i] = distKpc * b.R[i]
		v[i] = rvKms*b.R[i] + k*(pmRAMasYr*b.P[i]+pmDecMasYr*b.Q[i])
	}
	r[0] -= s.DistanceKpc
	pos = [3]float64{ct*r[0] + st*r[2], r[1], -st*r[0] + ct*r[2]}
	vel = [3]float64{ct*v[0] + st*v[2] + s.VelocityKms[0], v[1] + s.VelocityKms[1], -st*v[0] + ct*v[2] + s.VelocityKms[2]}
	return pos, vel
}

// FromGalactocentric is the inverse of ToGalactocentric: from a
// Galactocentric position (kpc) and velocity (km/s) it returns the ICRS
// direction (radians, ra in [0, 2pi)), the heliocentric distance (kpc), the
// proper motions (mas/yr, pmRA is mu_alpha*) and the radial velocity (km/s).
// A point at the Sun itself has no direction: it returns ra = dec = 0,
// distKpc = 0, NaN proper motions and NaN radial velocity.
func (s Sun) FromGalactocentric(posKpc, velKms [3]float64) (raRad, decRad, distKpc, pmRAMasYr, pmDecMasYr, rvKms float64) {
	st, ct := s.tilt()
	// Undo the tilt (rotation about y by -t), then the shift along x.
	r := [3]float64{ct*posKpc[0] - st*posKpc[2], posKpc[1], st*posKpc[0] + ct*posKpc[2]}
	r[0] += s.DistanceKpc
	v := [3]float64{velKms[0] - s.VelocityKms[0], velKms[1] - s.VelocityKms[1], velKms[2] - s.VelocityKms[2]}
	v = [3]float64{ct*v[0] - st*v[2], v[1], st*v[0] + ct*v[2]}
	distKpc = math.Sqrt(r[0]*r[0] + r[1]*r[1] + r[2]*r[2])
	if distKpc == 0 {
		return 0, 0, 0, math.NaN(), math.NaN(), math.NaN()
	}
	e := rotateT(&ICRSToGal, r)
	raRad = math.Atan2(e[1], e[0])
	if raRad < 0 {
		raRad += 2 * math.Pi
	}
	decRad = math.Atan2(e[2], math.Hypot(e[0], e[1]))
	b := NewBasis(raRad, decRad)
	k := units.KmsPerMasYrKpc * distKpc
	rvKms = vec.Dot(v, b.R)
	pmRAMasYr = vec.Dot(v, b.P) / k
	pmDecMasYr = vec.Dot(v, b.Q) / k
	return raRad, decRad, distKpc, pmRAMasYr, pmDecMasYr, rvKms
}
