package healpix

import "math"

// MaxOrder is the largest supported order: nside = 2^29, 12*4^29 pixels.
const MaxOrder = 29

// polarSinZ is cos(0.01): closer than 0.01 rad to a pole the cap formula
// uses sin(theta) instead of 1 - |z|.
const polarSinZ = 0.9999500004166653

// NPix is the number of pixels at order: 12 * 4^order.
func NPix(order int) uint64 { return 12 << (2 * uint(order)) }

// Ang2PixNestRADec is Ang2PixNest with thetaRad = pi/2 - dec, phiRad = ra,
// decDeg in [-90, 90].
func Ang2PixNestRADec(order int, raDeg, decDeg float64) uint64 {
	decRad := decDeg * (math.Pi / 180)
	// cos and sin of theta from dec directly: no cancellation in pi/2 - dec.
	return ang2pixZ(order, math.Sin(decRad), math.Cos(decRad), raDeg*(math.Pi/180))
}

// Ang2PixNest is the nested pixel containing (thetaRad, phiRad), thetaRad in
// [0, pi]. order must be in 0..MaxOrder; neither is checked, and non-finite
// angles give an unspecified pixel.
func Ang2PixNest(order int, thetaRad, phiRad float64) uint64 {
	return ang2pixZ(order, math.Cos(thetaRad), math.Sin(thetaRad), phiRad)
}

// ang2pixZ takes z = cos(theta) and sinTheta = sin(theta) >= 0.
func ang2pixZ(order int, z, sinTheta, phiRad float64) uint64 {
	nside := int64(1) << uint(order)
	ns := float64(nside)
	// t in [0, 4): longitude in units of pi/2.
	t := math.Mod(phiRad*(2/math.Pi), 4)
	if t < 0 {
		t += 4
		if t >= 4 { // -tiny + 4 rounds to 4
			t = 0
		}
	}
	za := math.Abs(z)
	var face int64
	var ix, iy int64
	if za <= 2.0/3 {
		// Equatorial zone (Gorski et al. 2005, sect. 4, |z| <= 2/3; the
		// formulas here and for the caps are from memory of the scheme and
		// checked against the healpy tables):
		// the face edges are the lines t - 3z/4 = const and t + 3z/4 = const;
		// a and b count those lines (in nside units) below the point.
		u := ns * (0.5 + t)
		v := ns * (0.75 * z)
		a := int64(u - v) // ascending edge lines
		b := int64(u + v) // descending edge lines
		fa, fb := a>>uint(order), b>>uint(order)
		switch {
		case fa == fb:
			face = fa | 4
		case fa < fb:
			face = fa
		default:
			face = fb + 8
		}
		ix = b & (nside - 1)
		iy = nside - (a & (nside - 1)) - 1
	} else {
		// Polar caps (|z| > 2/3): sigma = sqrt(3 (1 - |z|)) is the distance
		// from the pole in face units (Gorski et al. 2005, sect. 4). Near the
		// pole 1 - |z| cancels; 3 (1 - |z|) = 3 sin^2(theta) / (1 + |z|).
		// The switch at 0.01 rad from a pole (1 - |z| < 5e-5) is healpy's
		// (from memory; checked by the boundary rows of ang2pix.csv): both
		// forms are accurate there, but points exactly on pixel edges then
		// fall in the same pixel as in healpy.
		q := math.Min(math.Floor(t), 3)
		tp := t - q
		var sigma float64
		if za < polarSinZ {
			sigma = math.Sqrt(3 * (1 - za))
		} else {
			sigma = sinTheta / math.Sqrt((1+za)/3)
		}
		s := ns * sigma
		a := int64(tp * s)
		b := int64((1 - tp) * s)
		a = min(a, nside-1) // points on the cap edge
		b = min(b, nside-1)
		if z >= 0 {
			face = int64(q)
			ix, iy = nside-b-1, nside-a-1
		} else {
			face = int64(q) + 8
			ix, iy = a, b
		}
	}
	return uint64(face)<<(2*uint(order)) | interleave(uint64(ix), uint64(iy))
}

// Pix2AngNest is the centre of nested pixel pix at order: thetaRad in
// [0, pi], phiRad in [0, 2 pi). pix must be below NPix(order); not checked.
func Pix2AngNest(order int, pix uint64) (thetaRad, phiRad float64) {
	nside := int64(1) << uint(order)
	ns := float64(nside)
	face := int64(pix >> (2 * uint(order)))
	x, y := deinterleave(pix & (uint64(1)<<(2*uint(order)) - 1))
	ix, iy := int64(x), int64(y)
	// Face layout (Gorski et al. 2005, fig. 3 and sect. 4; from memory,
	// checked against the healpy pix2ang table): faces 0-3 are
	// the north cap, 4-7 the equatorial zone, 8-11 the south cap, numbered
	// eastwards. faceRing is the ring of the southern corner of the face in
	// units of nside, faceLon the longitude of its centre in units of pi/4.
	faceRing := face/4 + 2
	faceLon := 2*(face%4) + 1
	if face/4 == 1 {
		faceLon--
	}
	// Ring number 1..4 nside - 1 counted from the north pole.
	ring := faceRing*nside - ix - iy - 1
	var nr int64
	var z, sinTheta float64
	shift := int64(0)
	switch {
	case ring < nside: // north cap
		nr = ring
		f := float64(nr) / ns
		w := f * f / 3 // 1 - z, exact enough without cancellation
		z = 1 - w
		sinTheta = math.Sqrt(w * (2 - w))
	case ring > 3*nside: // south cap
		nr = 4*nside - ring
		f := float64(nr) / ns
		w := f * f / 3
		z = w - 1
		sinTheta = math.Sqrt(w * (2 - w))
	default: // equatorial zone: z linear in ring number
		nr = nside
		z = float64(2*nside-ring) * 2 / (3 * ns)
		shift = (ring - nside) & 1
		sinTheta = math.Sqrt((1 - z) * (1 + z))
	}
	// Pixel number along the ring, 1..4 nr.
	j := (faceLon*nr + ix - iy + 1 + shift) / 2
	if j > 4*nr {
		j -= 4 * nr
	}
	if j < 1 {
		j += 4 * nr
	}
	phiRad = (float64(j) - float64(shift+1)*0.5) * (math.Pi / 2 / float64(nr))
	return math.Atan2(sinTheta, z), phiRad
}

// interleave puts the bits of x on the even and those of y on the odd bit
// positions of the index within a face (Gorski et al. 2005, sect. 4).
func interleave(x, y uint64) uint64 { return spread(x) | spread(y)<<1 }

func deinterleave(p uint64) (x, y uint64) { return compact(p), compact(p >> 1) }

func spread(v uint64) uint64 {
	v &= 0xFFFFFFFF
	v = (v | v<<16) & 0x0000FFFF0000FFFF
	v = (v | v<<8) & 0x00FF00FF00FF00FF
	v = (v | v<<4) & 0x0F0F0F0F0F0F0F0F
	v = (v | v<<2) & 0x3333333333333333
	v = (v | v<<1) & 0x5555555555555555
	return v
}

func compact(v uint64) uint64 {
	v &= 0x5555555555555555
	v = (v | v>>1) & 0x3333333333333333
	v = (v | v>>2) & 0x0F0F0F0F0F0F0F0F
	v = (v | v>>4) & 0x00FF00FF00FF00FF
	v = (v | v>>8) & 0x0000FFFF0000FFFF
	v = (v | v>>16) & 0x00000000FFFFFFFF
	return v
}
