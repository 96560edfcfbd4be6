// Package vec holds the small helpers on numbers and Cartesian 3-vectors
// ([3]float64) that several packages need: dot product, norm and
// finiteness. The vectors carry whatever unit the caller's names say (kpc,
// km/s, unit vectors); the functions add none.
package vec
