package kinematics

import (
	"math"

	"starvet/internal/units"
	"starvet/internal/vec"
)

// catalogDistance is an independent distance: normal in kpc truncated at
// d > 0, or normal in distance modulus.
type catalogDistance struct {
	modulus     bool
	mean, sigma float64 // kpc, or mag for a modulus
	// A modulus mu + sigma z is the distance d(mu) exp(z sigma ln(10)/5)
	// (from d = 10^(mu/5 + 1) pc): one exp per draw instead of a pow.
	modKpc, lnSpread float64
}

// newModulusDistance is the catalog distance of a modulus muMag +- sigmaMag.
func newModulusDistance(muMag, sigmaMag float64) catalogDistance {
	return catalogDistance{modulus: true, mean: muMag, sigma: sigmaMag,
		modKpc: distanceFromModulusKpc(muMag), lnSpread: sigmaMag * math.Ln10 / 5}
}

// draw returns one distance in kpc.
func (c catalogDistance) draw(rnd *stream) float64 {
	if c.modulus {
		return c.modKpc * math.Exp(c.lnSpread*rnd.norm())
	}
	if c.sigma == 0 {
		return c.mean
	}
	// Rejection from the untruncated normal; the mean is positive, so at
	// least half the draws are accepted.
	for {
		if d := c.mean + c.sigma*rnd.norm(); d > 0 {
			return d
		}
	}
}

// distanceFromModulusKpc inverts the definition of the distance modulus,
// mu = 5 log10(d / 10 pc): d = 10^(mu/5 + 1) pc.
func distanceFromModulusKpc(muMag float64) float64 {
	return math.Pow(10, muMag/5+1) / units.PcPerKpc
}

// chooseDistance picks the distance method for s, recording fatal reasons
// in r (r.OK false) and notes about catalog distances it could not use.
func chooseDistance(s *Star, set *Settings, r *Result) (string, catalogDistance) {
	wCorr := s.ParallaxMas - set.ParallaxZeroPointMas
	plxOK := vec.Finite(s.ParallaxMas) && vec.Finite(s.ParallaxErrMas)

	var cat catalogDistance
	catOK := false
	var catProblem string
	switch {
	case vec.Finite(s.DistMod) && vec.Finite(s.DistModErr):
		cat, catOK = newModulusDistance(s.DistMod, s.DistModErr), true
	case vec.Finite(s.DistKpc) && vec.Finite(s.DistErrKpc) && s.DistKpc > 0:
		cat, catOK = catalogDistance{mean: s.DistKpc, sigma: s.DistErrKpc}, true
	case vec.Finite(s.DistMod):
		catProblem = "distance modulus without uncertainty"
	case vec.Finite(s.DistKpc) && !(s.DistKpc > 0):
		catProblem = "non-positive catalog distance"
	case vec.Finite(s.DistKpc):
		catProblem = "catalog distance without uncertainty"
	default:
		catProblem = "no catalog distance"
	}

	method := set.Distance
	if method == "" || method == MethodAuto {
		switch {
		case plxOK && wCorr/s.ParallaxErrMas >= set.MinParallaxSignificance:
			method = MethodInverse
		case catOK:
			method = MethodCatalog
		case plxOK:
			if catProblem != "no catalog distance" {
				r.note(ReasonCatalogDistance, "%s, edsd distance used instead", catProblem)
			}
			method = MethodEDSD
		default:
			r.fail(ReasonNoDistance, "no usable parallax and %s", catProblem)
			return "", cat
		}
	}
	switch method {
	case MethodInverse:
		if !plxOK {
			r.fail(ReasonNoParallax, "parallax or its uncertainty missing for inverse distance")
		} else if !(wCorr > 0) {
			r.fail(ReasonNonPositivePlx, "non-positive parallax with inverse distance")
		}
	case MethodEDSD:
		if !plxOK {
			r.fail(ReasonNoParallax, "parallax or its uncertainty missing for edsd distance")
		}
	case MethodCatalog:
		if !catOK {
			r.fail(ReasonCatalogDistance, "%s for catalog distance", catProblem)
		}
	}
	return method, cat
}
