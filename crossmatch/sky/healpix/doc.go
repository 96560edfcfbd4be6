// Package healpix is the nested HEALPix pixelisation of the sphere
// (Gorski et al. 2005, ApJ 622, 759) for any order 0..29, nside = 2^order.
//
// Units and frames: directions are colatitude thetaRad in [0, pi] and
// longitude phiRad in radians (any value; it is taken modulo 2 pi). The
// RADec helpers take raDeg, decDeg in degrees with thetaRad = pi/2 - dec and
// phiRad = ra. The scheme is frame-agnostic: pixels are in whatever frame the
// angles are in. Pixel indices are nested-scheme indices in [0, NPix(order)).
//
// Pix2AngNest returns pixel centres. NeighboursNest returns the 8 neighbours
// in the order SW, W, NW, N, NE, E, SE, S (-1 where a pixel has only 7).
// QueryDiscNest returns a conservative superset of the pixels that intersect
// a disc. Nothing allocates except QueryDiscNest, and there is no global
// mutable state. The checks against healpy live in testdata/healpix (tables
// made by make_tables.py) and in TestHealpyLive.
package healpix
