package scenario

import (
	"math"

	"starvet/vetting/frames"
)

// galaxy bundles what the generator needs from the Galactic model: the Sun
// that maps Galactocentric phase space to observables, the potential, the
// escape speed and an orbit integrator. Truth is computed with the same Sun
// and potential that the campaign file names.
type galaxy struct {
	sun       frames.Sun
	modelName string
	phi       func(x [3]float64) float64    // (km/s)^2
	accel     func(x [3]float64) [3]float64 // (km/s)^2/kpc
	vesc      func(x [3]float64) float64    // km/s
	advance   func(x, v [3]float64, tMyr float64) ([3]float64, [3]float64)
}

// fromGalactocentric inverts frames.Sun.ToGalactocentric: it returns the
// ICRS direction (radians), heliocentric distance (kpc), proper motions
// (mas/yr, pm_ra = mu_alpha*) and radial velocity (km/s) of a star at
// Galactocentric posKpc moving with velKms.
func fromGalactocentric(s frames.Sun, posKpc, velKms [3]float64) (raRad, decRad, distKpc, pmRAMasYr, pmDecMasYr, rvKms float64) {
	return shimFromGalactocentric(s, posKpc, velKms)
}

// vcirc returns the circular speed (km/s) in the plane at cylindrical radius
// rKpc: v_c^2 = R |dPhi/dR| (Binney & Tremaine 2008, Galactic Dynamics, 2nd
// ed., eq. 2.17, for the z = 0 plane).
func (g *galaxy) vcirc(rKpc float64) float64 {
	a := g.accel([3]float64{rKpc, 0, 0})
	return math.Sqrt(math.Max(0, -a[0]*rKpc))
}

// speed returns |v|.
func speed(v [3]float64) float64 { return math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2]) }

func norm(x [3]float64) float64 { return speed(x) }
