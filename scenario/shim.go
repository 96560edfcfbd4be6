package scenario

import (
	"math"

	"starvet/vetting/frames"
)

// This file holds private stand-ins for pieces other packages are adding
// (frames.Sun.FromGalactocentric, potential.Builtin, orbit.Advance). They
// are replaced by the real calls once those land.

// shimFromGalactocentric undoes frames.Sun.ToGalactocentric step by step:
// remove the Sun's velocity, undo the tilt about y by asin(z_sun/R0), shift
// the origin back to the Sun, then project onto the line-of-sight triad.
func shimFromGalactocentric(s frames.Sun, pos, vel [3]float64) (raRad, decRad, distKpc, pmRAMasYr, pmDecMasYr, rvKms float64) {
	st := s.HeightPc / 1000 / s.DistanceKpc
	ct := math.Sqrt(1 - st*st)
	r := [3]float64{ct*pos[0] - st*pos[2], pos[1], st*pos[0] + ct*pos[2]}
	r[0] += s.DistanceKpc
	w := [3]float64{vel[0] - s.VelocityKms[0], vel[1] - s.VelocityKms[1], vel[2] - s.VelocityKms[2]}
	v := [3]float64{ct*w[0] - st*w[2], w[1], st*w[0] + ct*w[2]}
	distKpc = norm(r)
	g := [3]float64{r[0] / distKpc, r[1] / distKpc, r[2] / distKpc}
	// Galactic -> ICRS is the transpose of frames.ICRSToGal.
	m := &frames.ICRSToGal
	var e [3]float64
	for i := range 3 {
		e[i] = m[0][i]*g[0] + m[1][i]*g[1] + m[2][i]*g[2]
	}
	raRad = math.Atan2(e[1], e[0])
	if raRad < 0 {
		raRad += 2 * math.Pi
	}
	decRad = math.Asin(math.Max(-1, math.Min(1, e[2])))
	b := frames.NewBasis(raRad, decRad)
	dot := func(a, c [3]float64) float64 { return a[0]*c[0] + a[1]*c[1] + a[2]*c[2] }
	k := frames.KmsPerMasYrKpc * distKpc
	return raRad, decRad, distKpc, dot(v, b.P) / k, dot(v, b.Q) / k, dot(v, b.R)
}

// shimSun is the default Sun of the campaign format: R0 = 8.122 kpc
// (GRAVITY Collaboration 2018, A&A 615, L15), z_sun = 20.8 pc (Bennett &
// Bovy 2019, MNRAS 482, 1417), v_sun = (12.9, 245.6, 7.78) km/s (Drimmel &
// Poggio 2018, RNAAS 2, 210).
func shimSun() frames.Sun {
	return frames.Sun{DistanceKpc: 8.122, HeightPc: 20.8, VelocityKms: [3]float64{12.9, 245.6, 7.78}}
}

// shimG is the gravitational constant in kpc (km/s)^2 / Msun (from memory:
// 4.30091e-6).
const shimG = 4.30091e-6

// shimModel is a three-component mass model: a Hernquist (1990, ApJ 356,
// 359, eq. 2) bulge, a Miyamoto & Nagai (1975, PASJ 27, 533, eq. 4) disk and
// a Navarro, Frenk & White (1996, ApJ 462, 563) halo with potential
// -G M_s ln(1 + r/r_s)/r. Masses and scales are chosen by us to give a
// circular speed near 230 km/s at the Sun; all potentials vanish at
// infinity, so v_esc = sqrt(-2 Phi).
type shimModel struct {
	mBulge, aBulge      float64 // Msun, kpc
	mDisk, aDisk, bDisk float64 // Msun, kpc, kpc
	mHalo, rsHalo       float64 // Msun, kpc
}

func newShimModel() *shimModel {
	return &shimModel{mBulge: 5e9, aBulge: 0.7, mDisk: 6.8e10, aDisk: 3.0, bDisk: 0.28, mHalo: 5.4e11, rsHalo: 16}
}

func (m *shimModel) Phi(x [3]float64) float64 {
	r := norm(x)
	rc := math.Hypot(x[0], x[1])
	zb := math.Hypot(x[2], m.bDisk)
	p := -shimG * m.mBulge / (r + m.aBulge)
	p += -shimG * m.mDisk / math.Sqrt(rc*rc+(m.aDisk+zb)*(m.aDisk+zb))
	if r < 1e-9 {
		p += -shimG * m.mHalo / m.rsHalo
	} else {
		p += -shimG * m.mHalo * math.Log1p(r/m.rsHalo) / r
	}
	return p
}

func (m *shimModel) Accel(x [3]float64) [3]float64 {
	r := norm(x)
	rc2 := x[0]*x[0] + x[1]*x[1]
	zb := math.Hypot(x[2], m.bDisk)
	var a [3]float64
	if r > 0 {
		// Hernquist: dPhi/dr = G M/(r+a)^2.
		fb := shimG * m.mBulge / ((r + m.aBulge) * (r + m.aBulge)) / r
		// NFW: dPhi/dr = G M [ln(1+r/rs)/r^2 - 1/(r (rs + r))].
		fh := shimG * m.mHalo * (math.Log1p(r/m.rsHalo)/(r*r) - 1/(r*(m.rsHalo+r))) / r
		for i := range 3 {
			a[i] -= (fb + fh) * x[i]
		}
	}
	s := m.aDisk + zb
	d3 := math.Pow(rc2+s*s, 1.5)
	fd := shimG * m.mDisk / d3
	a[0] -= fd * x[0]
	a[1] -= fd * x[1]
	a[2] -= fd * x[2] * s / zb
	return a
}

// shimAdvance integrates an orbit for tMyr with a kick-drift-kick leapfrog
// (Hockney & Eastwood 1988, Computer Simulation Using Particles, sec. 4-4)
// whose step follows the local crossing and free-fall times.
func shimAdvance(accel func([3]float64) [3]float64, x, v [3]float64, tMyr float64) ([3]float64, [3]float64) {
	const myrPerUnit = 977.792221 // kpc/(km/s) in Myr (from memory)
	const eta = 0.002
	tLeft := tMyr / myrPerUnit
	a := accel(x)
	for tLeft > 0 {
		r := math.Max(norm(x), 0.01)
		dt := eta * math.Min(r/math.Max(speed(v), 1), math.Sqrt(r/math.Max(norm(a), 1e-9)))
		dt = math.Min(dt, 0.5/myrPerUnit)
		dt = math.Min(dt, tLeft)
		for i := range 3 {
			v[i] += 0.5 * dt * a[i]
			x[i] += dt * v[i]
		}
		a = accel(x)
		for i := range 3 {
			v[i] += 0.5 * dt * a[i]
		}
		tLeft -= dt
	}
	return x, v
}

func shimGalaxy() *galaxy {
	m := newShimModel()
	return &galaxy{
		sun:       shimSun(),
		modelName: "scenario-shim",
		phi:       m.Phi,
		accel:     m.Accel,
		vesc:      func(x [3]float64) float64 { return math.Sqrt(math.Max(0, -2*m.Phi(x))) },
		advance:   func(x, v [3]float64, tMyr float64) ([3]float64, [3]float64) { return shimAdvance(m.Accel, x, v, tMyr) },
	}
}
