package kinematics

import (
	"math"
	"math/bits"
)

// stream is a star's random stream: the PCG generator with DXSM output of
// math/rand/v2 (O'Neill 2014, "PCG: a family of simple fast space-efficient
// statistically good algorithms for random number generation", Harvey Mudd
// College HMC-CS-2014-0905; constants and output function as in
// math/rand/v2's PCG), with uniform and normal draws written out on the
// concrete type, so that a draw costs no interface call. TestStreamMatches
// checks that every draw equals rand.New(rand.NewPCG(seed)) bit for bit.
type stream struct {
	hi, lo uint64
}

// seed sets the state as rand.PCG.Seed does.
func (s *stream) seed(hi, lo uint64) { s.hi, s.lo = hi, lo }

// Uint64 is the next output (stream is a rand.Source).
func (s *stream) Uint64() uint64 {
	const (
		mulHi    = 2549297995355413924
		mulLo    = 4865540595714422341
		incHi    = 6364136223846793005
		incLo    = 1442695040888963407
		cheapMul = 0xda942042e4dd58b5
	)
	// state = state * mul + inc (128-bit LCG)
	hi, lo := bits.Mul64(s.lo, mulLo)
	hi += s.hi*mulLo + s.lo*mulHi
	lo, c := bits.Add64(lo, incLo, 0)
	hi, _ = bits.Add64(hi, incHi, c)
	s.lo, s.hi = lo, hi
	// DXSM output
	hi ^= hi >> 32
	hi *= cheapMul
	hi ^= hi >> 48
	hi *= lo | 1
	return hi
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
	const (
		mulHi    = 2549297995355413924
		mulLo    = 4865540595714422341
		incHi    = 6364136223846793005
		incLo    = 1442695040888963407
		cheapMul = 0xda942042e4dd58b5
	)
	t := &zig
	sHi, sLo := s.hi, s.lo
	for n := range z {
		// Uint64, written out on the local state.
		hi, lo := bits.Mul64(sLo, mulLo)
		hi += sHi*mulLo + sLo*mulHi
		lo, c := bits.Add64(lo, incLo, 0)
		hi, _ = bits.Add64(hi, incHi, c)
		sLo, sHi = lo, hi
		hi ^= hi >> 32
		hi *= cheapMul
		hi ^= hi >> 48
		hi *= lo | 1
		j := int32(hi)
		i := hi >> 32 & 0x7F
		if absInt32(j) < t.k[i] {
			z[n] = float64(j) * float64(t.w[i])
			continue
		}
		s.hi, s.lo = sHi, sLo
		z[n] = s.normEdge(j, i)
		sHi, sLo = s.hi, s.lo
	}
	s.hi, s.lo = sHi, sLo
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

// advance moves s ahead by k outputs, as k calls of Uint64 would, in
// O(log k) steps: k steps of the LCG state -> a state + c are one step
// with a^k and c (a^k - 1)/(a - 1), built by repeated squaring (Brown
// 1994, "Random number generation with arbitrary strides", Trans. Am.
// Nucl. Soc. 71, 202). TestStreamAdvance checks it against Uint64.
func (s *stream) advance(k uint64) {
	const (
		mulHi = 2549297995355413924
		mulLo = 4865540595714422341
		incHi = 6364136223846793005
		incLo = 1442695040888963407
	)
	accMul, accInc := u128{0, 1}, u128{}
	curMul, curInc := u128{mulHi, mulLo}, u128{incHi, incLo}
	for ; k > 0; k >>= 1 {
		if k&1 != 0 {
			accMul = accMul.mul(curMul)
			accInc = accInc.mul(curMul).add(curInc)
		}
		curInc = curMul.add(u128{0, 1}).mul(curInc)
		curMul = curMul.mul(curMul)
	}
	st := accMul.mul(u128{s.hi, s.lo}).add(accInc)
	s.hi, s.lo = st.hi, st.lo
}

// u128 is an unsigned integer modulo 2^128.
type u128 struct{ hi, lo uint64 }

func (a u128) mul(b u128) u128 {
	hi, lo := bits.Mul64(a.lo, b.lo)
	return u128{hi + a.hi*b.lo + a.lo*b.hi, lo}
}

func (a u128) add(b u128) u128 {
	lo, c := bits.Add64(a.lo, b.lo, 0)
	hi, _ := bits.Add64(a.hi, b.hi, c)
	return u128{hi, lo}
}
