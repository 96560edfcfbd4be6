package potential

// Potential is a static Galactic mass model in Galactocentric Cartesian
// coordinates. Positions are in kpc, the potential in (km/s)^2 and the
// acceleration in (km/s)^2/kpc, so that with time in kpc/(km/s) (about
// 977.79 Myr) the equations of motion need no further constants.
type Potential interface {
	Phi(xKpc [3]float64) float64
	Accel(xKpc [3]float64) [3]float64
}
