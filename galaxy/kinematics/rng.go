package kinematics

import (
	"math"
	"math/bits"
)

// stream is a star's random stream: xoshiro256++ (Blackman & Vigna 2021,
// "Scrambled linear pseudorandom number generators", ACM Trans. Math.
// Softw. 47, 36), whose state steps by shifts and xors alone, with uniform
// and ziggurat normal draws as math/rand/v2's Rand makes them from a
// Source, written out on the concrete type so that a draw costs no
// interface call. TestStreamMatches checks every draw against gonum's
// prng.Xoshiro256plusplus under rand.New, bit for bit. (Until 7085e45 the
// stream was math/rand/v2's PCG-DXSM, whose 128-bit multiply chain made a
// normal draw cost about twice as much.)
type stream struct {
	s0, s1, s2, s3 uint64
}

// seed fills the state from the two seed words with SplitMix64 outputs
// (the seeding its authors advise; Steele, Lea & Flood 2014): two from hi,
// two from lo.
func (s *stream) seed(hi, lo uint64) {
	s.s0, s.s1 = splitmixNext(&hi), splitmixNext(&hi)
	s.s2, s.s3 = splitmixNext(&lo), splitmixNext(&lo)
}

// splitmixNext is the next output of the SplitMix64 generator whose state
// is x.
func splitmixNext(x *uint64) uint64 {
	r := splitmix64(*x)
	*x += 0x9e3779b97f4a7c15
	return r
}

// Uint64 is the next output (stream is a rand.Source).
func (s *stream) Uint64() uint64 {
	r := bits.RotateLeft64(s.s0+s.s3, 23) + s.s0
	t := s.s1 << 17
	s.s2 ^= s.s0
	s.s3 ^= s.s1
	s.s1 ^= s.s2
	s.s0 ^= s.s3
	s.s2 ^= t
	s.s3 = bits.RotateLeft64(s.s3, 45)
	return r
}

// float64 is uniform on [0, 1) with 53 random bits (as rand.Rand.Float64).
func (s *stream) float64() float64 {
	return float64(s.Uint64()<<11>>11) / (1 << 53)
}

// norm is a standard normal draw by the ziggurat method of Marsaglia &
// Tsang 2000 (J. Stat. Softw. 5(8), 1), with 128 strips, in the same form
// and with the same use of the random bits as rand.Rand.NormFloat64.
func (s *stream) norm() float64 {
	u := s.Uint64()
	j := int32(u)
	i := u >> 32 & 0x7F
	if absInt32(j) < zig.k[i] {
		// Inside the strip's rectangle: over 98% of draws.
		return float64(j) * float64(zig.w[i])
	}
	return s.normEdge(j, i)
}

// normals fills z with len(z) draws of norm, the same numbers in the same
// order: the rectangle test of norm in one loop, with the generator's
// state in registers and no call per draw.
func (s *stream) normals(z []float64) {
	t := &zig
	s0, s1, s2, s3 := s.s0, s.s1, s.s2, s.s3
	for n := range z {
		// Uint64, written out on the local state.
		u := bits.RotateLeft64(s0+s3, 23) + s0
		x := s1 << 17
		s2 ^= s0
		s3 ^= s1
		s1 ^= s2
		s0 ^= s3
		s2 ^= x
		s3 = bits.RotateLeft64(s3, 45)
		j := int32(u)
		i := u >> 32 & 0x7F
		if absInt32(j) < t.k[i] {
			z[n] = float64(j) * float64(t.w[i])
			continue
		}
		s.s0, s.s1, s.s2, s.s3 = s0, s1, s2, s3
		z[n] = s.normEdge(j, i)
		s0, s1, s2, s3 = s.s0, s.s1, s.s2, s.s3
	}
	s.s0, s.s1, s.s2, s.s3 = s0, s1, s2, s3
}

// normEdge finishes a draw that fell outside the rectangle of strip i: the
// tail beyond zigR for strip 0 (Marsaglia 1964, Technometrics 6, 101), the
// wedge under the density otherwise, with a fresh draw on rejection.
func (s *stream) normEdge(j int32, i uint64) float64 {
	for {
		x := float64(j) * float64(zig.w[i])
		if i == 0 {
			for {
				x = -math.Log(s.float64()) * (1.0 / zigR)
				y := -math.Log(s.float64())
				if y+y >= x*x {
					break
				}
			}
			if j > 0 {
				return zigR + x
			}
			return -zigR - x
		}
		if zig.f[i]+float32(s.float64())*(zig.f[i-1]-zig.f[i]) < float32(math.Exp(-.5*x*x)) {
			return x
		}
		u := s.Uint64()
		j = int32(u)
		i = u >> 32 & 0x7F
		if absInt32(j) < zig.k[i] {
			return float64(j) * float64(zig.w[i])
		}
	}
}

// absInt32 is |i| without a branch: the sign of a random draw is a coin
// toss that a branch predictor misses half the time.
func absInt32(i int32) uint32 {
	m := i >> 31 // 0 or -1
	return uint32((i ^ m) - m)
}

// zigR is the start of the tail and zigV the area of each strip for 128
// strips (Marsaglia & Tsang 2000, J. Stat. Softw. 5(8), 1, table set-up
// "zigset"; values from there, from memory, checked by TestStreamMatches).
const (
	zigR = 3.442619855899
	zigV = 9.91256303526217e-3
)

// zigTables: k[i] is the rectangle test bound of strip i in units of 2^-31,
// w[i] the strip's width per unit of the 32-bit draw, f[i] the density at
// the strip's edge.
type zigTables struct {
	k [128]uint32
	w [128]float32
	f [128]float32
}

// zig is computed once and never written afterwards.
var zig = newZigTables()

// newZigTables follows the set-up of Marsaglia & Tsang 2000 (zigset).
func newZigTables() zigTables {
	const m1 = 1 << 31
	var t zigTables
	dn, tn := zigR, zigR
	q := zigV / math.Exp(-.5*dn*dn)
	t.k[0] = uint32(dn / q * m1)
	t.k[1] = 0
	t.w[0] = float32(q / m1)
	t.w[127] = float32(dn / m1)
	t.f[0] = 1
	t.f[127] = float32(math.Exp(-.5 * dn * dn))
	for i := 126; i >= 1; i-- {
		dn = math.Sqrt(-2 * math.Log(zigV/dn+math.Exp(-.5*dn*dn)))
		t.k[i+1] = uint32(dn / tn * m1)
		tn = dn
		t.f[i] = float32(math.Exp(-.5 * dn * dn))
		t.w[i] = float32(dn / m1)
	}
	return t
}
