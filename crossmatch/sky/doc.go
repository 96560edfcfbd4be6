// Package sky is the sky geometry of starvet: angles between directions,
// position angles, unit vectors and epoch propagation of astrometry.
//
// In: directions as (ra, dec) in radians (Separation, PositionAngle,
// UnitVector) or an Astrometry record in catalog units (ra, dec in degrees,
// ICRS; parallax in mas; proper motions in mas/yr with pm_ra = mu_alpha* =
// mu_alpha cos dec; rv in km/s; NaN = unknown) plus two epochs in Julian
// years.
//
// Out: separations in radians in [0, pi] (Vincenty form, good from
// micro-arcseconds to antipodes), position angles in radians east of north in
// [0, 2pi), ra in [0, 2pi) (radians) or [0, 360) (degrees).
//
// Propagate uses rigorous space motion equivalent to ERFA eraPmsafe when both
// a positive parallax and rv are known, and otherwise moves the star along
// its great circle by |mu| dt. It does not allocate. The checks against ERFA
// live in testdata/erfa (tables, no cgo) and in erfa_live_test.go (build tag
// erfa, cgo).
package sky
