package kinematics

import (
	"math"

	"starvet/galaxy/frames"
	"starvet/internal/units"
	"starvet/internal/vec"
)

// VelocityLaw is the law of a star's Galactocentric velocity (km/s) given
// that it lies at posKpc, one of its draws' positions (SamplePos): the
// measured proper motions at the distance of posKpc and the measured rv,
// Gaussian with mean MeanKms and covariance CovKms2. It is the law the
// draw's velocity came from under the flat prior: where the distance came
// from the parallax (every method but a catalog distance without a usable
// parallax) the proper motions are conditional on the parallax 1/d, so
// their correlations with it are kept (the conditional of a joint normal,
// common practice), as the draws keep them. ok is false for a star without
// rv or usable proper-motion errors, or a position at the Sun.
func VelocityLaw(s *Star, set *Settings, posKpc [3]float64) (meanKms [3]float64, covKms2 [3][3]float64, ok bool) {
	if !(vec.Finite(s.RVKms) && s.RVErrKms >= 0 && vec.Finite(s.PMRAMasYr) && vec.Finite(s.PMDecMasYr) &&
		s.PMRAErrMasYr >= 0 && s.PMDecErrMasYr >= 0) {
		return meanKms, covKms2, false
	}
	_, _, dKpc, _, _, _ := set.Sun.FromGalactocentric(posKpc, [3]float64{})
	if !(dKpc > 0) {
		return meanKms, covKms2, false
	}
	corr := [3]float64{s.CorrParallaxPMRA, s.CorrParallaxPMDec, s.CorrPMRAPMDec}
	for i, c := range corr {
		if !vec.Finite(c) {
			corr[i] = 0
		}
	}
	sa, sd := s.PMRAErrMasYr, s.PMDecErrMasYr
	pm := [2]float64{s.PMRAMasYr, s.PMDecMasYr}
	cpm := [2][2]float64{{sa * sa, corr[2] * sa * sd}, {corr[2] * sa * sd, sd * sd}}
	sw := s.ParallaxErrMas
	if sw > 0 && vec.Finite(s.ParallaxMas) {
		// (parallax, pm) jointly normal: pm | w = mean + beta (w - w_obs),
		// cov - c c^T / sw^2, with c the parallax-pm covariances.
		c := [2]float64{corr[0] * sw * sa, corr[1] * sw * sd}
		dw := 1/dKpc - (s.ParallaxMas - set.ParallaxZeroPointMas)
		for i := range 2 {
			pm[i] += c[i] / (sw * sw) * dw
			for j := range 2 {
				cpm[i][j] -= c[i] * c[j] / (sw * sw)
			}
		}
	}
	b := frames.NewBasis(s.RADeg*units.RadPerDeg, s.DecDeg*units.RadPerDeg)
	_, v0 := set.Sun.ToGalactocentric(b, dKpc, 0, 0, 0)
	_, meanKms = set.Sun.ToGalactocentric(b, dKpc, pm[0], pm[1], s.RVKms)
	// The velocity is linear in (pm_ra, pm_dec, rv) at a fixed distance:
	// the Jacobian's columns are the velocities of unit inputs less v0.
	var jac [3][3]float64
	for k, in := range [3][3]float64{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}} {
		_, v := set.Sun.ToGalactocentric(b, dKpc, in[0], in[1], in[2])
		for i := range 3 {
			jac[i][k] = v[i] - v0[i]
		}
	}
	cin := [3][3]float64{{cpm[0][0], cpm[0][1], 0}, {cpm[1][0], cpm[1][1], 0}, {0, 0, s.RVErrKms * s.RVErrKms}}
	for i := range 3 {
		for j := range 3 {
			var sum float64
			for k := range 3 {
				for l := range 3 {
					sum += jac[i][k] * cin[k][l] * jac[j][l]
				}
			}
			covKms2[i][j] = sum
		}
	}
	return meanKms, covKms2, !math.IsNaN(meanKms[0])
}
