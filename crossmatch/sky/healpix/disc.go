package healpix

import (
	"math"
	"slices"
)

// maxPixRadRad bounds the angular distance from the centre of any pixel at
// order to any point of that pixel: 1.63 * (pi/4) / nside.
//
// Derivation (from the projection of Gorski et al. 2005, sect. 4): in the
// projection plane every pixel is a square whose diagonals are pi/(2 nside)
// long, centred on the pixel centre, so every point of it is within
// pi/(4 nside) of the centre in the plane. The inverse projection is
// Lipschitz: in the equatorial zone (y = 3 pi z / 8, x = phi, |z| <= 2/3)
// its Jacobian has norm <= sqrt((8/(pi sqrt 5))^2 + 1) = 1.52; in the caps
// (sigma = 4 (pi/2 - |y|) / pi, phi - phi_c = (x - phi_c) / sigma, theta from
// 1 - |z| = sigma^2 / 3) the Frobenius norm is <= sqrt((8/(pi sqrt 5))^2 +
// 2/3 + 2/3) = 1.622. A segment in the plane maps to a curve at most 1.622
// times as long, hence the bound; 1.63 leaves margin for rounding. The
// largest true centre-to-corner distance is smaller (see TestMaxPixRad), so
// the bound is loose by a factor reported there.
func maxPixRadRad(order int) float64 {
	return 1.63 * (math.Pi / 4) / float64(int64(1)<<uint(order))
}

// QueryDiscNest appends to dst[:0] the nested pixels at order that may
// intersect the disc of radius radiusRad around (thetaRad, phiRad), sorted
// ascending, and returns it. It is conservative: every pixel that intersects
// the disc is returned. It also returns pixels whose centre is within
// radiusRad + maxPixRadRad(order) of the disc centre, i.e. pixels up to about
// 1.28/nside rad beyond the disc edge (TestQueryDiscHealpyTable reports the
// ratio to healpy's inclusive count). A negative or NaN radius gives no
// pixels; a radius reaching the whole sphere gives all NPix(order) pixels.
// Cost and memory are proportional to the number of pixels returned.
func QueryDiscNest(order int, thetaRad, phiRad, radiusRad float64, dst []uint64) []uint64 {
	dst = dst[:0]
	if !(radiusRad >= 0) {
		return dst
	}
	limRad := radiusRad + maxPixRadRad(order)
	if limRad >= math.Pi {
		for p := range NPix(order) {
			dst = append(dst, p)
		}
		return dst
	}
	c := unitVector(thetaRad, phiRad)
	start := Ang2PixNest(order, thetaRad, phiRad)
	// Breadth-first walk over pixels whose centre is within limRad. The
	// pixels meeting the disc are among them and, the disc being connected
	// and touching pixels being neighbours, are reached from the pixel that
	// holds the centre.
	seen := map[uint64]struct{}{start: {}}
	dst = append(dst, start)
	for i := 0; i < len(dst); i++ {
		for _, q := range NeighboursNest(order, dst[i]) {
			if q < 0 {
				continue
			}
			p := uint64(q)
			if _, ok := seen[p]; ok {
				continue
			}
			seen[p] = struct{}{}
			if angleRad(c, unitVector(Pix2AngNest(order, p))) <= limRad {
				dst = append(dst, p)
			}
		}
	}
	slices.Sort(dst)
	return dst
}

func unitVector(thetaRad, phiRad float64) [3]float64 {
	st, ct := math.Sincos(thetaRad)
	sp, cp := math.Sincos(phiRad)
	return [3]float64{st * cp, st * sp, ct}
}

// angleRad is the angle between unit vectors, accurate at all separations.
func angleRad(a, b [3]float64) float64 {
	cx := a[1]*b[2] - a[2]*b[1]
	cy := a[2]*b[0] - a[0]*b[2]
	cz := a[0]*b[1] - a[1]*b[0]
	return math.Atan2(math.Sqrt(cx*cx+cy*cy+cz*cz), a[0]*b[0]+a[1]*b[1]+a[2]*b[2])
}

// ParentsNear appends to dst[:0], ascending and once each, the pixels at
// order that hold a pixel QueryDiscNest(fineOrder, ...) returns for the
// disc, and returns it with the scratch slice for reuse. fineOrder must not
// be below order. Because QueryDiscNest returns exactly the pixels whose
// centre lies within radiusRad + MaxPixRadRad(fineOrder) of the disc
// centre (the breadth-first walk reaches all of them), the answer obeys
// the triangle inequality on those centres: a parent found for a point at
// radius r is found, for any point within d of it, at radius r + d.
func ParentsNear(order, fineOrder int, thetaRad, phiRad, radiusRad float64, scratch, dst []uint64) (parents, scratchOut []uint64) {
	scratch = QueryDiscNest(fineOrder, thetaRad, phiRad, radiusRad, scratch)
	shift := 2 * uint(fineOrder-order)
	dst = dst[:0]
	for _, p := range scratch {
		if q := p >> shift; len(dst) == 0 || dst[len(dst)-1] != q {
			dst = append(dst, q)
		}
	}
	return dst, scratch
}

// MaxPixRadRad bounds the angular distance from a pixel's centre to any
// point of the pixel at order, radians.
func MaxPixRadRad(order int) float64 { return maxPixRadRad(order) }

// planeStretch bounds how much the HEALPix projection stretches a path on
// the sphere inside one base face: a path of angle a maps to a path no
// longer than planeStretch * a in the projection plane. Derivation (the
// projection formulas of Gorski et al. 2005, sect. 4, quoted in
// maxPixRadRad): in the equatorial zone y = 3 pi z / 8 changes by at most
// 3 pi / 8 = 1.178 per radian of declination and x = phi by 1 / cos(dec)
// <= 3 / sqrt(5) = 1.342 per radian along a parallel; in the caps
// (y = +-(pi/4)(2 - sigma), x = phi_c + (phi - phi_c) sigma,
// sigma^2 = 3 (1 - |z|)) dsigma/dtheta <= sqrt(3/2) gives at most
// (pi/4) sqrt(3/2) = 0.962 for both y and x per radian of colatitude, and
// x changes by sigma / sin(theta) <= 3 / sqrt(5) per radian along a
// parallel. The Frobenius norms, 1.786 and 1.911, bound the stretch; 2
// leaves margin.
const planeStretch = 2.0

// DiscInside returns the pixel at order holding the point (thetaRad,
// phiRad) and whether every point within radiusRad of it lies in that
// pixel too. It answers from the point's pixel at fineOrder (>= order):
// when k whole fine pixels separate it from each edge of its coarse pixel
// in the projection plane (each pi / (2 sqrt 2 nside) wide), no path
// shorter than k * width / planeStretch leaves the coarse pixel. It is
// sufficient, not necessary: false only means "cannot tell cheaply".
func DiscInside(order, fineOrder int, thetaRad, phiRad, radiusRad float64) (pixel uint64, inside bool) {
	p := Ang2PixNest(fineOrder, thetaRad, phiRad)
	s := uint(fineOrder - order)
	pixel = p >> (2 * s)
	n := uint64(1) << s
	x, y := deinterleave(p & (n*n - 1))
	k := min(x, y, n-1-x, n-1-y)
	width := math.Pi / (2 * math.Sqrt2 * float64(uint64(1)<<uint(fineOrder)))
	return pixel, float64(k)*width > planeStretch*radiusRad
}
