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

// catalogPosteriorScan is the size of the coarse scan that finds where the
// catalog-distance posterior lives before it is tabulated.
const catalogPosteriorScan = 256

// logPrior returns ln p_cat(d) for d in kpc as a function of ln d and d,
// normalised over d > 0: log-normal for a modulus (the density of
// d = d(mu) exp(z sigma ln10/5) has the Jacobian 1/d), else the normal
// truncated at 0 (divided by Phi(mean/sigma)). Needs sigma > 0. The
// constants are worked out once per star.
func (c catalogDistance) logPrior() func(lnD, d float64) float64 {
	if c.modulus {
		lnMode, inv := math.Log(c.modKpc), 1/c.lnSpread
		norm := math.Log(c.lnSpread * math.Sqrt(2*math.Pi))
		return func(lnD, _ float64) float64 {
			x := (lnD - lnMode) * inv
			return -x*x/2 - lnD - norm
		}
	}
	inv := 1 / c.sigma
	norm := math.Log(c.sigma * math.Sqrt(2*math.Pi) * 0.5 * math.Erfc(-c.mean/(c.sigma*math.Sqrt2)))
	return func(_, d float64) float64 {
		x := (d - c.mean) * inv
		return -x*x/2 - norm
	}
}

// priorRange is where the catalog distance has all but a negligible part
// of its probability (10 sigma each side; d > 0), in kpc.
func (c catalogDistance) priorRange() (lo, hi float64) {
	if c.modulus {
		return c.modKpc * math.Exp(-10*c.lnSpread), c.modKpc * math.Exp(10*c.lnSpread)
	}
	return c.mean - 10*c.sigma, c.mean + 10*c.sigma
}

// buildCatalog tabulates the posterior of a catalog distance (prior) given
// the parallax wMas +- sMas (likelihood; s > 0), for inverse-CDF draws:
//
//	p(d | w) ∝ p_cat(d) L(d),  L(d) = exp(-(w - 1/d)^2 / (2 s^2)) / L_max
//
// (Bayes' theorem, as drawCatalogWithParallax's doc says; L_max the
// largest L over d > 0, 1 when w > 0). A coarse scan uniform in ln d over
// the prior's range finds the highest point; the table (edsdGridPoints,
// uniform in ln d, as for the EDSD posterior) spans the scan cells whose
// log density is within edsdLogDrop of it, one cell more each side. It
// returns ln of the acceptance, the integral of p_cat L, which a
// rejection sampler from the prior would keep; ok is false when the table
// holds no mass.
func (t *edsdTable) buildCatalog(c catalogDistance, wMas, sMas, lnLMax float64) (lnAccept float64, ok bool) {
	lo, hi := c.priorRange()
	// Below 1/(max(w, 0) + 40 s) the likelihood is below exp(-800).
	lo = max(lo, 1/(max(wMas, 0)+40*sMas))
	if !(hi > lo) {
		return math.Inf(-1), false
	}
	inv2s2 := 1 / (2 * sMas * sMas)
	prior := c.logPrior()
	logPost := func(lnD, d float64) float64 {
		z := wMas - 1/d
		return prior(lnD, d) - z*z*inv2s2 - lnLMax
	}
	lnLo, lnHi := math.Log(lo), math.Log(hi)
	step := (lnHi - lnLo) / (catalogPosteriorScan - 1)
	var scan [catalogPosteriorScan]float64
	top := math.Inf(-1)
	for i := range scan {
		x := lnLo + float64(i)*step
		scan[i] = logPost(x, math.Exp(x))
		top = max(top, scan[i])
	}
	if math.IsInf(top, -1) || math.IsNaN(top) {
		return math.Inf(-1), false
	}
	first, last := 0, catalogPosteriorScan-1
	for scan[first] < top-edsdLogDrop {
		first++
	}
	for scan[last] < top-edsdLogDrop {
		last--
	}
	a := lnLo + float64(max(first-1, 0))*step
	b := lnLo + float64(min(last+1, catalogPosteriorScan-1))*step
	n := edsdGridPoints
	t.r, t.f, t.cdf = resize(t.r, n), resize(t.f, n), resize(t.cdf, n)
	dln := (b - a) / float64(n-1)
	peak := math.Inf(-1)
	for i := range n {
		x := a + float64(i)*dln
		d := math.Exp(x)
		t.r[i], t.f[i] = d, logPost(x, d)
		peak = max(peak, t.f[i])
	}
	for i := range n {
		t.f[i] = math.Exp(t.f[i] - peak)
	}
	t.cdf[0] = 0
	for i := 1; i < n; i++ {
		t.cdf[i] = t.cdf[i-1] + 0.5*(t.f[i]+t.f[i-1])*(t.r[i]-t.r[i-1])
	}
	t.buildGuide()
	total := t.cdf[n-1]
	return peak + math.Log(total), total > 0
}
