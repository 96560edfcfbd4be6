package weigh

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"starvet/galaxy/potential"
)

// EjectionModel is the population of Galactic-Centre ejectees the orbit
// method assumes: stars leave the centre at a constant rate, in isotropic
// directions, with a speed (referred by energy to EjectionDepthKpc) drawn
// from a law on [SpeedMinKms, SpeedMaxKms], and are seen after a flight of
// FlightMinMyr to FlightMaxMyr. The halo mass the method returns is
// conditional on this model (Contigiani, Rossi & Marchetti 2019, MNRAS 487,
// 4025, likewise assume a known ejection model).
type EjectionModel struct {
	SpeedMinKms, SpeedMaxKms float64
	// SpeedSigmaKms > 0: a Gaussian of mean SpeedMeanKms and this width,
	// truncated to the range; 0: uniform on the range.
	SpeedMeanKms, SpeedSigmaKms float64
	FlightMinMyr, FlightMaxMyr  float64
}

// DefaultEjection is the ejection model starvet assumes and its invented
// scenarios fly: speeds normal about 1150 km/s with a spread of 175 km/s
// (cut to 0-3000 km/s, where the tails are negligible), at a constant rate
// from today back to 250 Myr ago.
// OUR ASSUMPTION, not a published fit: speeds of the order a binary broken
// up by the central black hole gives its stars (Hills 1988, Nature 331,
// 687; the mean and spread are from memory), and flights up to about the
// main-sequence lifetime of a late B star (from memory). The speed law is
// smooth and the window opens today on purpose: the box law used before
// (uniform on 700-1800 km/s, flights of 10-250 Myr) gave a precisely
// measured star near an edge a likelihood with a cliff (README, "On the
// invented scenarios"). The window's far end is still sharp; FitOrbits
// keeps stars beyond DefaultOrbitMaxRadiusKpc out of the fit, so that no
// selected star comes near it.
var DefaultEjection = EjectionModel{SpeedMinKms: 0, SpeedMaxKms: 3000, SpeedMeanKms: 1150, SpeedSigmaKms: 175, FlightMinMyr: 0, FlightMaxMyr: 250}

// String describes the model in words, for notes and logs.
func (e EjectionModel) String() string {
	speed := fmt.Sprintf("speeds uniform on %g-%g km/s", e.SpeedMinKms, e.SpeedMaxKms)
	if e.SpeedSigmaKms > 0 {
		speed = fmt.Sprintf("speeds normal about %g km/s with a spread of %g km/s, cut to %g-%g km/s", e.SpeedMeanKms, e.SpeedSigmaKms, e.SpeedMinKms, e.SpeedMaxKms)
	}
	flight := fmt.Sprintf("flights of %g-%g Myr at a constant rate", e.FlightMinMyr, e.FlightMaxMyr)
	return fmt.Sprintf("%s at %g pc from the centre, %s", speed, 1000*EjectionDepthKpc, flight)
}

// ErrEjectionModel is returned (wrapped) for an invalid EjectionModel.
var ErrEjectionModel = errors.New("weigh: invalid ejection model")

// Validate checks the ranges.
func (e EjectionModel) Validate() error {
	ok := e.SpeedMinKms >= 0 && e.SpeedMaxKms > e.SpeedMinKms && !math.IsInf(e.SpeedMaxKms, 0) &&
		e.SpeedSigmaKms >= 0 && !math.IsNaN(e.SpeedMeanKms) && !math.IsInf(e.SpeedSigmaKms, 0) &&
		e.FlightMinMyr >= 0 && e.FlightMaxMyr > e.FlightMinMyr
	if !ok {
		return fmt.Errorf("%w: %+v", ErrEjectionModel, e)
	}
	return nil
}

// SpeedPDF is the speed law's density shape (per km/s) at v0Kms; it is
// not normalised when truncated, which the likelihood does not need.
func (e EjectionModel) SpeedPDF(v0Kms float64) float64 {
	if v0Kms < e.SpeedMinKms || v0Kms > e.SpeedMaxKms {
		return 0
	}
	if e.SpeedSigmaKms == 0 {
		return 1 / (e.SpeedMaxKms - e.SpeedMinKms)
	}
	z := (v0Kms - e.SpeedMeanKms) / e.SpeedSigmaKms
	return math.Exp(-0.5*z*z) / (e.SpeedSigmaKms * math.Sqrt(2*math.Pi))
}

// SampleSpeed draws an ejection speed (km/s) from the law.
func (e EjectionModel) SampleSpeed(rng *rand.Rand) float64 {
	if e.SpeedSigmaKms == 0 {
		return e.SpeedMinKms + (e.SpeedMaxKms-e.SpeedMinKms)*rng.Float64()
	}
	for {
		v := e.SpeedMeanKms + e.SpeedSigmaKms*rng.NormFloat64()
		if v >= e.SpeedMinKms && v <= e.SpeedMaxKms {
			return v
		}
	}
}

// SampleFlightMyr draws a flight time (Myr): uniform, a constant rate.
func (e EjectionModel) SampleFlightMyr(rng *rand.Rand) float64 {
	return e.FlightMinMyr + (e.FlightMaxMyr-e.FlightMinMyr)*rng.Float64()
}

// LaunchSpeedKms is the speed at x0Kpc (near the centre) of an ejectee
// whose law speed, at EjectionDepthKpc along x0's direction, is v0Kms:
// energy conservation (common practice). NaN when x0 lies deeper than
// v0 can climb from.
func LaunchSpeedKms(p *potential.Model, x0Kpc [3]float64, v0Kms float64) float64 {
	r := math.Sqrt(x0Kpc[0]*x0Kpc[0] + x0Kpc[1]*x0Kpc[1] + x0Kpc[2]*x0Kpc[2])
	ref := [3]float64{EjectionDepthKpc, 0, 0}
	if r > 0 {
		f := EjectionDepthKpc / r
		ref = [3]float64{f * x0Kpc[0], f * x0Kpc[1], f * x0Kpc[2]}
	}
	v2 := v0Kms*v0Kms - 2*(p.Phi(x0Kpc)-p.Phi(ref))
	if v2 < 0 {
		return math.NaN()
	}
	return math.Sqrt(v2)
}

// rayNodes is the number of radii at which a ray's potential is tabulated
// for the flight time: log-spaced from EjectionDepthKpc to the star (ours;
// the trapezoid rule on 1/v with 48 intervals is within a per cent of a
// 1000-interval sum for speeds above 300 km/s, see TestRayFlightTime).
const rayNodes = 49

// ray is the potential along the straight line from EjectionDepthKpc to a
// draw's position, in the draw's direction: the radial path of an
// ejectee that is there now.
type ray struct {
	rKpc [rayNodes]float64
	dPhi [rayNodes]float64 // Phi(r) - Phi(EjectionDepthKpc), (km/s)^2
	// dPhiMax is the largest dPhi on the way: a speed v0 reaches the end
	// only if v0^2 > 2 dPhiMax.
	dPhiMax float64
	ok      bool // the draw lies beyond EjectionDepthKpc
}

func newRay(p *potential.Model, x [3]float64) ray {
	var r ray
	d := math.Sqrt(x[0]*x[0] + x[1]*x[1] + x[2]*x[2])
	if !(d > EjectionDepthKpc) || math.IsInf(d, 0) {
		return r
	}
	r.ok = true
	at := func(rk float64) [3]float64 { f := rk / d; return [3]float64{f * x[0], f * x[1], f * x[2]} }
	phi0 := p.Phi(at(EjectionDepthKpc))
	for j := range rayNodes {
		rk := EjectionDepthKpc * math.Pow(d/EjectionDepthKpc, float64(j)/(rayNodes-1))
		if j == rayNodes-1 {
			rk = d
		}
		r.rKpc[j] = rk
		r.dPhi[j] = p.Phi(at(rk)) - phi0
		r.dPhiMax = math.Max(r.dPhiMax, r.dPhi[j])
	}
	return r
}

// scaled is the ray at halo scale sc from r, at scale 1, and r2, the same
// draw's ray at scale 2: the potential is linear in the NFW mass
// (ScaleHalo), so dPhi(sc) = dPhi(1) + (sc - 1) (dPhi(2) - dPhi(1)).
func (r *ray) scaled(r2 *ray, sc float64) ray {
	out := ray{ok: r.ok, rKpc: r.rKpc}
	if !r.ok {
		return out
	}
	for j := range rayNodes {
		out.dPhi[j] = r.dPhi[j] + (sc-1)*(r2.dPhi[j]-r.dPhi[j])
		out.dPhiMax = math.Max(out.dPhiMax, out.dPhi[j])
	}
	return out
}

// end is dPhi at the draw's position.
func (r *ray) end() float64 { return r.dPhi[rayNodes-1] }

// flightMyr is the time (Myr) an outgoing radial orbit of speed v0Kms at
// EjectionDepthKpc takes to reach the draw, t = integral dr / v(r) with
// v(r)^2 = v0^2 - 2 dPhi(r) (trapezoid rule on the nodes); +Inf when it
// cannot get there.
func (r *ray) flightMyr(v0Kms float64) float64 {
	v02 := v0Kms * v0Kms
	if !(v02 > 2*r.dPhiMax) {
		return math.Inf(1)
	}
	var t float64
	prev := 1 / math.Sqrt(v02-2*r.dPhi[0])
	for j := 1; j < rayNodes; j++ {
		cur := 1 / math.Sqrt(v02-2*r.dPhi[j])
		t += 0.5 * (prev + cur) * (r.rKpc[j] - r.rKpc[j-1])
		prev = cur
	}
	return t * potential.TimeUnitMyr
}

// speedForFlight is the v0 (km/s) whose flight to the draw takes tMyr
// (flightMyr falls as v0 grows), by bisection to 0.01 km/s; lo is the
// least speed that gets there.
func (r *ray) speedForFlight(tMyr float64) float64 {
	lo := math.Sqrt(2 * r.dPhiMax)
	if r.flightMyr(lo*(1+1e-9)+1e-9) <= tMyr {
		return lo
	}
	hi := math.Max(2*lo, 1000)
	for r.flightMyr(hi) > tMyr {
		hi *= 2
	}
	for hi-lo > 0.01 {
		mid := 0.5 * (lo + hi)
		if r.flightMyr(mid) > tMyr {
			lo = mid
		} else {
			hi = mid
		}
	}
	return 0.5 * (lo + hi)
}

// ejectionDensity is the density of a draw's present speed vKms given its
// position, under the ejection model e in the potential whose ray r is,
// among the stars with present speed >= vSelKms:
//
//	p(v | x) = [f(v0)/v0] [t(v0) in window] / N(x),
//	N(x)     = integral over v >= vSel of [f(v0)/v0] [t(v0) in window] dv
//	         = integral over v0 of f(v0) [t(v0) in window] [v >= vSel] dv0 / v,
//
// with v0^2 = v^2 + 2 dPhi(x), f = e.SpeedPDF, t the flight time. Zero
// when the draw cannot be an ejectee of the model (v0 outside the law or
// t outside the window) or N = 0 (a draw below vSel where no selected
// speed is possible).
//
// Derivation (ours, following the construction of Contigiani, Rossi &
// Marchetti 2019, MNRAS 487, 4025, sec. 2, from memory; see also Gnedin et
// al. 2005, ApJ 634, 344): stars leave the centre at a constant rate R
// with speed law f(v0) on radial orbits. A star of speed v0 ejected a time
// tau ago is at r(tau; v0); the number between r and r + dr with speeds in
// dv0 is the number ejected during the time it takes to cross dr,
// R f(v0) dv0 dr / v(r; v0), counted only when its flight time t(r; v0)
// lies in the model's window (a constant rate over the window's ages).
// At fixed r, v dv = v0 dv0 (energy conservation), so the density of the
// present speed is R f(v0) [t in window] / v0 per dv. The observational
// selection depends on position and brightness, not on the velocity
// (besides the caller's speed cut vSel), so the likelihood of a star is
// that density conditioned on its position and the speed cut: the
// spatial density of ejectees, which the selection function shapes,
// drops out; each star's score is normalised at its own position.
//
// SIMPLIFICATIONS (ours): the orbit is radial along the draw's own
// direction from EjectionDepthKpc (the disk's deflection and the launch
// region's size are neglected); only the outgoing branch is counted
// (ejectees falling back after their apocentre within the window are
// absent; in the default model's halo scaled up to 3 times the apocentre
// of a 700 km/s ejectee, 2.6 spreads below DefaultEjection's mean, lies
// beyond 10 kpc, more than 100 Myr out); the
// speed cut is applied to each draw's speed, while the caller cuts on the
// star's median.
func ejectionDensity(e *EjectionModel, r *ray, vKms, vSelKms float64) float64 {
	if !r.ok {
		return 0
	}
	f := ejectionShape(e, r, vKms)
	if f == 0 {
		return 0
	}
	n := ejectionNorm(e, r, vSelKms)
	if !(n > 0) {
		return 0
	}
	return f / n
}

// ejectionShape is f(v0)/v0 [t(v0) in window], ejectionDensity's numerator
// (0 when the draw cannot be an ejectee of the model).
func ejectionShape(e *EjectionModel, r *ray, vKms float64) float64 {
	if !r.ok {
		return 0
	}
	dPhi := r.end()
	v02 := vKms*vKms + 2*dPhi
	if !(v02 > 0) {
		return 0
	}
	v0 := math.Sqrt(v02)
	f := e.SpeedPDF(v0)
	if f == 0 {
		return 0
	}
	if t := r.flightMyr(v0); !(t >= e.FlightMinMyr && t <= e.FlightMaxMyr) {
		return 0
	}
	return f / v0
}

// ejectionNorm is N(x) of ejectionDensity. The window in t is one in v0
// (t falls as v0 grows): v0 from speedForFlight(FlightMax) to
// speedForFlight(FlightMin). With u = ln(v0 + v), du = dv0 / v, so for a
// uniform law N is f (u_b - u_a); for a Gaussian the integral over u
// takes Simpson's rule with 64 intervals (ours).
func ejectionNorm(e *EjectionModel, r *ray, vSelKms float64) float64 {
	dPhi := r.end()
	a := math.Max(e.SpeedMinKms, math.Sqrt(math.Max(vSelKms*vSelKms+2*dPhi, 0)))
	a = math.Max(a, math.Sqrt(2*r.dPhiMax))
	a = math.Max(a, r.speedForFlight(e.FlightMaxMyr))
	b := e.SpeedMaxKms
	if e.FlightMinMyr > 0 {
		b = math.Min(b, r.speedForFlight(e.FlightMinMyr))
	}
	if !(b > a) {
		return 0
	}
	u := func(v0 float64) float64 { return math.Log(v0 + math.Sqrt(math.Max(v0*v0-2*dPhi, 0))) }
	ua, ub := u(a), u(b)
	if e.SpeedSigmaKms == 0 {
		return (ub - ua) / (e.SpeedMaxKms - e.SpeedMinKms)
	}
	// v0 from u: v0 + v = exp(u), v0 - v = 2 dPhi / exp(u).
	g := func(uu float64) float64 {
		w := math.Exp(uu)
		return e.SpeedPDF(math.Min(math.Max(0.5*(w+2*dPhi/w), a), b))
	}
	const n = 64
	h := (ub - ua) / n
	sum := g(ua) + g(ub)
	for k := 1; k < n; k++ {
		c := 2.0
		if k%2 == 1 {
			c = 4
		}
		sum += c * g(ua+float64(k)*h)
	}
	return sum * h / 3
}
