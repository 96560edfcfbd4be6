package scenario

import (
	"math"
	"math/rand/v2"

	"starvet/internal/units"
	"starvet/internal/vec"
)

// astroRow is one row of the astrometric catalog, canonical units.
type astroRow struct {
	raDeg, decDeg          float64
	raErrMas, decErrMas    float64
	plxMas, plxErrMas      float64
	pmRA, pmRAErr          float64 // mas/yr
	pmDec, pmDecErr        float64 // mas/yr
	corrRADec, corrPlxPMRA float64
	corrPlxPMDec, corrPMPM float64
	fitResidual            float64
	excessNoiseMas         float64
	excessNoiseSig         float64
	fitVisits              int
	duplicateFlag          int
	mag                    float64
}

// specRow is one row of the spectroscopic catalog: positions at the
// spectroscopic epoch, rv in km/s, distance modulus in mag (NaN if none).
type specRow struct {
	id                  string
	host                *star // the star whose light this is; nil for a neighbour
	raDeg, decDeg       float64
	posErrMas           float64
	rvKms, rvErrKms     float64
	snr                 float64
	distMod, distModErr float64
	release             int
	bad                 *badCell
}

// photRow is one row of the photometric catalog (epoch 2000.0).
type photRow struct {
	id            string
	raDeg, decDeg float64
	posErrArcsec  float64
	mag, color    float64
}

// badCell replaces one cell of a row with an impossible value.
type badCell struct {
	header string // file column header
	text   string
	reason string
}

// Error model of the invented astrometric survey. It is made up, but shaped
// like those of real space astrometry: the parallax error grows from
// 0.02 mas at mag <= 14 to 0.5 mas at mag 20, log-linearly in magnitude
// (slope log10(25)/6 dex/mag), with 10% log-normal scatter; proper-motion
// errors (mas/yr) are 1.1 and 1.0 times it, position errors (mas) 0.8.
func parallaxErrMas(mag float64) float64 {
	const brightMas, brightMag, faintMas, faintMag = 0.02, 14.0, 0.5, 20.0
	if mag <= brightMag {
		return brightMas
	}
	slope := math.Log10(faintMas/brightMas) / (faintMag - brightMag)
	return brightMas * math.Pow(10, slope*(mag-brightMag))
}

// snrFor is the invented spectrum signal-to-noise model: 120 at mag 15,
// falling by a factor 10 per 5 mag (so ~10 near mag 20.4), with 20%
// log-normal scatter.
func snrFor(mag float64, rng *rand.Rand) float64 {
	return math.Min(300, 120*math.Pow(10, -0.2*(mag-15))*math.Exp(0.2*rng.NormFloat64()))
}

// rvErrFor: 1 km/s floor in quadrature with 80 km/s / snr (invented).
func rvErrFor(snr float64) float64 { return math.Hypot(1, 80/snr) }

// observeAstro draws the astrometric row of st. errScale multiplies every
// uncertainty (revised releases use < 1); clean suppresses the small share
// of spoilt fits that background stars have.
func observeAstro(st *star, rng *rand.Rand, errScale float64, clean bool) astroRow {
	src := st
	if st.twinOf != nil {
		src = st.twinOf
	}
	sp := parallaxErrMas(src.mag) * math.Exp(0.1*rng.NormFloat64()) * errScale
	r := astroRow{
		raErrMas:  0.8 * sp * math.Exp(0.05*rng.NormFloat64()),
		decErrMas: 0.8 * sp * math.Exp(0.05*rng.NormFloat64()),
		plxErrMas: sp,
		pmRAErr:   1.1 * sp * math.Exp(0.05*rng.NormFloat64()),
		pmDecErr:  1.0 * sp * math.Exp(0.05*rng.NormFloat64()),
	}
	r.corrRADec = 0.6*rng.Float64() - 0.3
	r.corrPlxPMRA = 0.6*rng.Float64() - 0.3
	r.corrPlxPMDec = 0.6*rng.Float64() - 0.3
	r.corrPMPM = 0.6*rng.Float64() - 0.3

	// Correlated errors: Cholesky factor of the 3x3 covariance of
	// (parallax, pm_ra, pm_dec) (common practice). |corr| <= 0.3 keeps the
	// matrix positive definite (diagonal dominance).
	s := [3]float64{r.plxErrMas, r.pmRAErr, r.pmDecErr}
	c := [3][3]float64{{1, r.corrPlxPMRA, r.corrPlxPMDec}, {r.corrPlxPMRA, 1, r.corrPMPM}, {r.corrPlxPMDec, r.corrPMPM, 1}}
	l := cholesky3(c)
	z := [3]float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()}
	var e [3]float64
	for i := range 3 {
		for j := 0; j <= i; j++ {
			e[i] += l[i][j] * z[j]
		}
		e[i] *= s[i]
	}
	r.plxMas = 1/src.distKpc + e[0] // parallax (mas) = 1 / distance (kpc)
	r.pmRA = src.pmRA + st.fakePM[0] + e[1]
	r.pmDec = src.pmDec + st.fakePM[1] + e[2]

	z1, z2 := rng.NormFloat64(), rng.NormFloat64()
	ex := r.raErrMas * z1
	ey := r.decErrMas * (r.corrRADec*z1 + math.Sqrt(1-r.corrRADec*r.corrRADec)*z2)
	ex += st.offsetMas[0]
	ey += st.offsetMas[1]
	r.raDeg, r.decDeg = offsetDeg(src.raDeg, src.decDeg, ex, ey)

	observeFit(&r, rng, clean)
	r.mag = src.mag + 0.003*rng.NormFloat64()
	return r
}

// observeFit draws the fit-quality columns of r; clean suppresses the
// spoilt fits.
func observeFit(r *astroRow, rng *rand.Rand, clean bool) {
	r.fitResidual = clamp(1+0.04*rng.NormFloat64(), 0.85, 1.3)
	r.excessNoiseSig = math.Abs(0.6 * rng.NormFloat64())
	r.excessNoiseMas = 0.03 * r.excessNoiseSig
	r.fitVisits = 9 + rng.IntN(18)
	if !clean {
		// A small share of ordinary stars with poor fits, as any real
		// catalog has (invented rates).
		if rng.Float64() < 0.015 {
			r.fitResidual = 1.4 + 1.6*rng.Float64()
		}
		if rng.Float64() < 0.01 {
			r.excessNoiseSig = 2.5 + 7.5*rng.Float64()
			r.excessNoiseMas = 0.05 + 0.2*rng.Float64()
		}
		if rng.Float64() < 0.01 {
			r.fitVisits = 5 + rng.IntN(3)
		}
	}
}

// cholesky3 returns the lower-triangular factor of a 3x3 symmetric positive
// definite matrix (Cholesky-Banachiewicz, common practice).
func cholesky3(a [3][3]float64) [3][3]float64 {
	var l [3][3]float64
	for i := range 3 {
		for j := 0; j <= i; j++ {
			sum := a[i][j]
			for k := range j {
				sum -= l[i][k] * l[j][k]
			}
			if i == j {
				l[i][j] = math.Sqrt(sum)
			} else {
				l[i][j] = sum / l[j][j]
			}
		}
	}
	return l
}

// offsetDeg moves (ra, dec) by (east, north) mas on the tangent plane
// (gnomonic inverse, common practice).
func offsetDeg(raDeg, decDeg, eastMas, northMas float64) (float64, float64) {
	return moveDeg(raDeg, decDeg, eastMas/units.MasPerDeg*units.RadPerDeg, northMas/units.MasPerDeg*units.RadPerDeg)
}

// moveDeg displaces the unit vector of (ra, dec) by the tangent vector
// xi*P + eta*Q (radians; P toward +ra, Q toward +dec) and renormalises.
func moveDeg(raDeg, decDeg, xi, eta float64) (float64, float64) {
	sa, ca := math.Sincos(raDeg * units.RadPerDeg)
	sd, cd := math.Sincos(decDeg * units.RadPerDeg)
	u := [3]float64{
		cd*ca - xi*sa - eta*sd*ca,
		cd*sa + xi*ca - eta*sd*sa,
		sd + eta*cd,
	}
	n := vec.Norm(u)
	ra := math.Atan2(u[1], u[0]) / units.RadPerDeg
	if ra < 0 {
		ra += 360
	}
	if ra >= 360 {
		ra -= 360
	}
	return ra, math.Asin(u[2]/n) / units.RadPerDeg
}

// propagateDeg moves a position at distKpc with proper motion and radial
// velocity rvKms over dtYr along its straight-line space motion: the unit
// vector u becomes u (1 + rho) + xi P + eta Q, renormalised, with xi, eta the
// proper motion times dtYr (radians) and rho = rv dtYr / d the fractional
// change of distance (common practice; ERFA's pmsafe adds the light-time
// and relativistic terms: against sky.Propagate, which has them, the
// high-proper-motion stars of seeds 1-8 differ by at most 0.0013 mas,
// measured). The radial term is the perspective acceleration: for a halo
// star 8 pc away at 400 km/s it moves the position by ~3 mas over the 8
// years between the catalogs (up to 3.1 mas in those seeds without it).
func propagateDeg(raDeg, decDeg, distKpc, pmRAMasYr, pmDecMasYr, rvKms, dtYr float64) (float64, float64) {
	rho := rvKms * dtYr / (units.KmsPerMasYrKpc * distKpc) * units.RadPerMas
	k := dtYr * units.RadPerMas / (1 + rho)
	return moveDeg(raDeg, decDeg, pmRAMasYr*k, pmDecMasYr*k)
}

// distModulus is mu = 5 log10(d / 10 pc) (definition), d in kpc.
func distModulus(distKpc float64) float64 { return 5*math.Log10(distKpc) + 10 }

// spectroDistanceMinKpc: stars beyond it get spectrophotometric distances.
const spectroDistanceMinKpc = 3.0

// observeSpec draws the spectrum of st: position at the spectroscopic
// epoch, rv with an S/N-dependent error and, beyond 3 kpc, a distance
// modulus with a 0.217-0.434 mag error, i.e. a 10-20 per cent distance
// error (sigma_d/d = ln(10)/5 sigma_mu, first order).
func observeSpec(st *star, rng *rand.Rand) *specRow {
	ra, dec := propagateDeg(st.raDeg, st.decDeg, st.distKpc, st.pmRA, st.pmDec, st.rvKms, SpectroscopyEpochJyr-AstrometryEpochJyr)
	const posErrMas = 80
	ra, dec = offsetDeg(ra, dec, posErrMas*rng.NormFloat64(), posErrMas*rng.NormFloat64())
	snr := snrFor(st.mag, rng)
	rvErr := rvErrFor(snr)
	row := &specRow{host: st, raDeg: ra, decDeg: dec, posErrMas: posErrMas, snr: snr,
		rvKms: st.rvKms + rvErr*rng.NormFloat64(), rvErrKms: rvErr, distMod: math.NaN(), distModErr: math.NaN()}
	if st.distKpc > spectroDistanceMinKpc {
		row.distModErr = 0.217 + (0.434-0.217)*rng.Float64()
		row.distMod = distModulus(st.distKpc) + row.distModErr*rng.NormFloat64()
	}
	return row
}

// observePhot draws the photometric row of st at epoch 2000.0.
func observePhot(st *star, rng *rand.Rand) *photRow {
	ra, dec := propagateDeg(st.raDeg, st.decDeg, st.distKpc, st.pmRA, st.pmDec, st.rvKms, PhotometryEpochJyr-AstrometryEpochJyr)
	const posErrMas = 100
	ra, dec = offsetDeg(ra, dec, posErrMas*rng.NormFloat64(), posErrMas*rng.NormFloat64())
	return &photRow{raDeg: ra, decDeg: dec, posErrArcsec: posErrMas / units.MasPerArcsec,
		mag: st.mag + 0.25*st.color + 0.01*rng.NormFloat64(), color: st.color + 0.02*rng.NormFloat64()}
}
