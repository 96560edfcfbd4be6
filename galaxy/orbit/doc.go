// Package orbit integrates stellar orbits in a static Galactic potential and
// traces hypervelocity-star candidates back to where they crossed the
// Galactic plane.
//
// In: Galactocentric Cartesian positions (kpc) and velocities (km/s) at the
// current epoch, Monte Carlo samples of them for Trace, and a
// potential.Potential. Times are in Myr at the API (negative = into the
// past); internally the time unit is kpc/(km/s) = potential.TimeUnitMyr Myr.
//
// Integrate/Advance use kick-drift-kick leapfrog with a time-symmetric
// adaptive step (Hut, Makino & McMillan 1995, ApJ 443, L93) set by the local
// dynamical time, one force evaluation per step. Trace integrates each
// sample backward and reports the first crossing of z = 0 (x, y in kpc,
// time before now in Myr), the closest approach to the centre, the flight
// time and an origin verdict of type Origin: "galactic-centre", "disk",
// "outer" or "untraced" (see Trace). The stored centre figure GCConsistency
// is the containment level 1 - exp(-D^2/2) of the centre, D its Mahalanobis
// distance from the crossings; at most GCConsistencyLevel means a centre
// origin. TraceAll spreads stars over worker goroutines (internal/parallel;
// default GOMAXPROCS).
package orbit
