package scenario

import (
	"math"

	"starvet/galaxy/frames"
)

// DecidableSigma is how far above the escape speed, in units of its own
// predicted speed uncertainty, a truly unbound star must move to count in
// the completeness denominator. A star at the margin m is expected to reach
// p_unbound >= 0.8 with probability Phi(m - 0.84) if its posterior is
// normal about a measurement scattered by one sigma: 0.88 at m = 2. The
// value 2 is our choice.
const DecidableSigma = 2.0

// speedMargin returns (v_gc - v_esc) / sigma, where sigma is the
// uncertainty of v_gc - v_esc that the star's published errors imply, by
// first-order propagation (numerical partial derivatives of the exact
// transform, frames.Sun.ToGalactocentric, and of the model escape speed)
// of the distance, both proper motions and the radial velocity, taken as
// independent. The distance error is the one the default pipeline would
// use: the parallax's (sigma_d/d = sigma_plx/plx) when parallax/error >= 5,
// else the spectroscopic distance modulus's (sigma_d/d = ln(10)/5
// sigma_mu, from d = 10^(mu/5+1) pc). NaN when the star has no usable
// spectrum or distance.
func (s *Scenario) speedMargin(st *star) float64 {
	sp := st.spec
	if sp == nil || st.twinOf != nil || !(sp.rvErrKms > 0) {
		return math.NaN()
	}
	a := st.astro
	var fracD float64
	switch {
	case a.plxErrMas > 0 && a.plxMas/a.plxErrMas >= 5:
		fracD = a.plxErrMas / a.plxMas
	case sp.distModErr > 0:
		fracD = math.Ln10 / 5 * sp.distModErr
	default:
		return math.NaN()
	}
	sun := s.galaxy.sun
	// x*math.Pi/180, not x*units.RadPerDeg: the other rounding would move
	// the last bit of the truth margins the demo writes.
	b := frames.NewBasis(st.raDeg*math.Pi/180, st.decDeg*math.Pi/180)
	f := func(d, pmRA, pmDec, rv float64) float64 {
		pos, vel := sun.ToGalactocentric(b, d, pmRA, pmDec, rv)
		return speed(vel) - s.galaxy.vesc(pos)
	}
	x := [4]float64{st.distKpc, st.pmRA, st.pmDec, st.rvKms}
	sig := [4]float64{fracD * st.distKpc, a.pmRAErr, a.pmDecErr, sp.rvErrKms}
	f0 := f(x[0], x[1], x[2], x[3])
	var v2 float64
	for i := range x {
		// Central difference with a step of a tenth of the error.
		h := 0.1 * sig[i]
		if !(h > 0) {
			continue
		}
		up, dn := x, x
		up[i] += h
		dn[i] -= h
		g := (f(up[0], up[1], up[2], up[3]) - f(dn[0], dn[1], dn[2], dn[3])) / (2 * h)
		v2 += g * g * sig[i] * sig[i]
	}
	if !(v2 > 0) {
		return math.NaN()
	}
	return f0 / math.Sqrt(v2)
}
