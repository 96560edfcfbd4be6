// Package frames converts between the ICRS, the Galactic frame and a
// Galactocentric Cartesian frame.
//
// In: ICRS (ra, dec) or Galactic (l, b) in radians; for the Galactocentric
// transforms a line of sight (Basis), heliocentric distance in kpc, proper
// motions in mas/yr (pm_ra = mu_alpha*), rv in km/s, and the Solar
// parameters (Sun: R0 in kpc, height in pc, velocity in km/s).
//
// Out: (l, b) or (ra, dec) in radians with the longitude in [0, 2pi);
// Galactocentric positions in kpc and velocities in km/s. The Galactic frame
// is the one defined by the pole and origin angles in ESA 1997 (ESA SP-1200,
// Vol. 1, section 1.5.3), the same as ERFA eraIcrs2g. The Galactocentric
// frame has x from the Sun's projection toward the centre (the Sun at x < 0),
// y along Galactic rotation, z toward the north Galactic pole, and the Sun at
// height z_sun (the heliocentric Galactic axes tilted about y by
// asin(z_sun/R0)).
//
// ERFA checks: tables in testdata/erfa (default tests) and a live cgo
// comparison behind the build tag erfa.
package frames
