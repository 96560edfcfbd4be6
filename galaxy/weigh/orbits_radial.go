package weigh

import (
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"

	"starvet/internal/vec"
)

// AcrossSigmaKms is the spread, per axis, of an ejectee's true velocity
// across its radius from the centre that ScoreEjection allows (ours): the
// model's orbits are radial but for the launch point's offset and the
// disk's pull. The invented scenarios' ejectees faster than 450 km/s have
// true speeds across the radius of median 1.9, 90th percentile 7.7 and
// largest 22 km/s (seed 1, 500 ejectees, measured 2026-12-04).
const AcrossSigmaKms = 10.0

// radialFit is the likelihood of a star's measured velocity, given one
// draw's position, under a velocity along that position's radius from the
// centre with speed s: the measurement is the Gaussian N(mean, cov) of the
// velocity (OrbitStar.VelMeanKms and VelCovKms2), widened across the
// radius by AcrossSigmaKms,
//
//	N3(mean; s u, C) = weight N(s; sHat, sSigma^2),
//	C = cov + AcrossSigmaKms^2 (I - u u^T), a = u^T C^-1 u,
//	sHat = u^T C^-1 mean / a, sSigma = a^(-1/2),
//	weight = exp(-chi2/2) / (2 pi sqrt(det C a)), chi2 = mean^T C^-1 mean - a sHat^2,
//
// (completing the square in s; common practice). weight, per (km/s)^2,
// is how well a radial velocity can explain the measurement at that
// distance; logWeight is its logarithm, kept because a star far from
// radial has weights below the smallest float64. ok is false when C is
// singular or u undefined.
type radialFit struct {
	sHat, sSigma, logWeight float64
	ok                      bool
}

func fitRadial(pos, mean [3]float64, cov *[3][3]float64) radialFit {
	r := vec.Norm(pos)
	if !(r > 0) || math.IsInf(r, 0) {
		return radialFit{}
	}
	u := [3]float64{pos[0] / r, pos[1] / r, pos[2] / r}
	s2 := AcrossSigmaKms * AcrossSigmaKms
	c := mat.NewSymDense(3, nil)
	for i := range 3 {
		for j := i; j < 3; j++ {
			d := 0.0
			if i == j {
				d = 1
			}
			c.SetSym(i, j, 0.5*(cov[i][j]+cov[j][i])+s2*(d-u[i]*u[j]))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(c) {
		return radialFit{}
	}
	uv, mv := mat.NewVecDense(3, u[:]), mat.NewVecDense(3, mean[:])
	var wu, wm mat.VecDense
	if ch.SolveVecTo(&wu, uv) != nil || ch.SolveVecTo(&wm, mv) != nil {
		return radialFit{}
	}
	a := mat.Dot(uv, &wu)
	if !(a > 0) {
		return radialFit{}
	}
	sHat := mat.Dot(uv, &wm) / a
	chi2 := math.Max(mat.Dot(mv, &wm)-a*sHat*sHat, 0)
	lw := -0.5*chi2 - math.Log(2*math.Pi) - 0.5*(ch.LogDet()+math.Log(a))
	return radialFit{sHat: sHat, sSigma: 1 / math.Sqrt(a), logWeight: lw, ok: true}
}

// strataZ returns n standard-normal quantiles at the mid-points of n
// equal-probability strata, (j + 1/2)/n: paired with a star's draws, which
// are independent and identically distributed, they integrate over the
// speed's Gaussian in the draw's direction (radialFit) as a stratified
// Monte Carlo sample with one point per draw (common practice), without a
// random source.
func strataZ(n int) []float64 {
	z := make([]float64, n)
	for j := range z {
		z[j] = distuv.UnitNormal.Quantile((float64(j) + 0.5) / float64(n))
	}
	return z
}

// speedBackground is the background's law of the speed along the radius,
// uniform on [vSel, vMax] (ours: a model-independent density in the units
// of ejectionDensity); speeds below vSel count at the law's height, as
// ejectionDensity does not zero them either.
func speedBackground(sKms, vSelKms, vMaxKms float64) float64 {
	if !(vMaxKms > vSelKms) || !(math.Abs(sKms) <= vMaxKms) {
		return 0
	}
	return 1 / (vMaxKms - vSelKms)
}
