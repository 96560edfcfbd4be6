package kinematics

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distmv"
)

// Stream identifiers mixed into a star's seed. The radial velocity has its
// own stream so that adding or removing an rv leaves the astrometric draws
// unchanged.
const (
	streamAstrometry uint64 = 1
	streamRV         uint64 = 2
)

// starSeed mixes the settings seed, the star ID (FNV-1a 64, Fowler, Noll &
// Vo; constants from the published specification, from memory) and a stream
// number into the two PCG seed words, so a star's numbers depend on nothing
// else: not the batch order, not the worker count.
func starSeed(seed uint64, id string, stream uint64) (uint64, uint64) {
	const (
		fnvOffset = 14695981039346656037
		fnvPrime  = 1099511628211
	)
	h := uint64(fnvOffset)
	for i := 0; i < len(id); i++ {
		h ^= uint64(id[i])
		h *= fnvPrime
	}
	return splitmix64(seed ^ splitmix64(stream)), splitmix64(h ^ splitmix64(seed+stream))
}

// splitmix64 is the finaliser of Steele, Lea & Flood 2014 (OOPSLA '14,
// "Fast splittable pseudorandom number generators"); constants from memory.
func splitmix64(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

// gauss draws from a normal of up to three dimensions. Components with zero
// variance are held at their mean (a zero uncertainty collapses the draw to
// the measured value); the others go through distmv, which checks that their
// covariance is positive definite.
type gauss struct {
	dim    int
	mean   [3]float64
	active [3]int // indices of the components with positive variance
	nAct   int
	lower  [3][3]float64 // Cholesky factor L (covariance = L L^T) of the active block
}

// newGauss prepares draws from N(mean, cov) over the first dim components.
// ok is false when the covariance of the active components is not positive
// definite.
func newGauss(dim int, mean [3]float64, cov *[3][3]float64, src rand.Source) (g gauss, ok bool) {
	g.dim, g.mean = dim, mean
	for i := range dim {
		if cov[i][i] > 0 {
			g.active[g.nAct] = i
			g.nAct++
		}
	}
	if g.nAct == 0 {
		return g, true
	}
	sym := mat.NewSymDense(g.nAct, nil)
	mu := make([]float64, g.nAct)
	for a := range g.nAct {
		mu[a] = mean[g.active[a]]
		for b := a; b < g.nAct; b++ {
			sym.SetSym(a, b, cov[g.active[a]][g.active[b]])
		}
	}
	if _, ok := distmv.NewNormal(mu, sym, src); !ok {
		return g, false
	}
	// distmv keeps its factor private; factorise again for the fast
	// per-draw transform (identical numbers, see TestGaussMatchesDistmv).
	var chol mat.Cholesky
	if !chol.Factorize(sym) {
		return g, false
	}
	u := chol.RawU()
	for a := range g.nAct {
		for b := 0; b <= a; b++ {
			g.lower[a][b] = u.At(b, a)
		}
	}
	return g, true
}

// draw fills x[:dim] with one draw, taking nAct standard normals from rnd in
// the same order as distmv.Normal.Rand.
func (g *gauss) draw(rnd *rand.Rand, x *[3]float64) {
	*x = g.mean
	var z [3]float64
	for a := range g.nAct {
		z[a] = rnd.NormFloat64()
	}
	for a := range g.nAct {
		var s float64
		for b := 0; b <= a; b++ {
			s += g.lower[a][b] * z[b]
		}
		x[g.active[a]] += s
	}
}
