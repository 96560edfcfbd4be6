package scenario

import (
	"fmt"
	"math"

	"starvet/galaxy/frames"
	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
	"starvet/galaxy/weigh"
	"starvet/internal/vec"
)

// galaxy bundles what the generator needs from the Galactic model: the Sun
// that maps Galactocentric phase space to observables, and the potential.
// Truth is computed with the same Sun and potential that the campaign file
// names (escape to infinity, the campaign default).
type galaxy struct {
	sun       frames.Sun
	modelName string
	model     *potential.Model
}

// newGalaxy is the default model with its NFW halo's mass scaled by
// haloScale (1: the model itself). The campaign still names the default
// model: a scenario with another halo is vetted, as real data are, in a
// model that may not be the Galaxy's.
func newGalaxy(haloScale float64) (*galaxy, error) {
	m, err := potential.Builtin(potential.DefaultModel)
	if err != nil {
		return nil, fmt.Errorf("scenario: %w", err)
	}
	if haloScale != 1 {
		if m, err = weigh.ScaleHalo(m, haloScale); err != nil {
			return nil, fmt.Errorf("scenario: %w", err)
		}
	}
	return &galaxy{sun: frames.DefaultSun(), modelName: potential.DefaultModel, model: m}, nil
}

// vesc is the escape speed (km/s) at x to infinity.
func (g *galaxy) vesc(x [3]float64) float64 { return g.model.EscapeSpeed(x, 0) }

// vcirc is the circular speed (km/s) in the plane at cylindrical radius R.
func (g *galaxy) vcirc(rKpc float64) float64 { return g.model.CircularVelocity(rKpc) }

// advance integrates an orbit forward for tMyr with the project's
// integrator at its default settings.
func (g *galaxy) advance(x, v [3]float64, tMyr float64) ([3]float64, [3]float64) {
	return orbit.Advance(g.model, x, v, tMyr, orbit.Options{})
}

// energy is the specific orbital energy (km/s)^2.
func (g *galaxy) energy(x, v [3]float64) float64 { return 0.5*vec.Dot(v, v) + g.model.Phi(x) }

// fromGalactocentric returns the ICRS direction (radians), heliocentric
// distance (kpc), proper motions (mas/yr, pm_ra = mu_alpha*) and radial
// velocity (km/s) of a star at Galactocentric posKpc moving with velKms.
func fromGalactocentric(s frames.Sun, posKpc, velKms [3]float64) (raRad, decRad, distKpc, pmRAMasYr, pmDecMasYr, rvKms float64) {
	return s.FromGalactocentric(posKpc, velKms)
}

// speed returns |v|.
func speed(v [3]float64) float64 { return math.Sqrt(vec.Dot(v, v)) }
