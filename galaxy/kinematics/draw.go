package kinematics

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"

	"starvet/internal/fingerprint"
)

// Stream identifiers mixed into a star's seed. The radial velocity has its
// own stream so that adding or removing an rv leaves the astrometric draws
// unchanged.
// The proper motions of distances drawn from a table (edsd, catalog with a
// parallax) have their own stream, so that a block of draws continues both
// where the previous block left them.
const (
	streamAstrometry uint64 = 1
	streamRV         uint64 = 2
	streamPM         uint64 = 3
)

// starSeed mixes the settings seed, the star ID (FNV-1a 64) and a stream
// number into the stream's two seed words, so a star's numbers depend on nothing
// else: not the batch order, not the worker count.
func starSeed(seed uint64, id string, stream uint64) (uint64, uint64) {
	h := fingerprint.FNV1a64(id)
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
// the measured value); the others are factorised as distmv.Normal does
// it (newGauss), which also checks that their covariance is positive
// definite.
type gauss struct {
	dim    int
	mean   [3]float64
	active [3]int // indices of the components with positive variance
	nAct   int
	lower  [3][3]float64 // Cholesky factor L (covariance = L L^T) of the active block
}

// newGauss prepares draws from N(mean, cov) over the first dim components.
// ok is false when the covariance of the active components is not positive
// definite. Called once per star: the per-draw work is in draw.
func newGauss(dim int, mean [3]float64, cov *[3][3]float64) (g gauss, ok bool) {
	g.dim, g.mean = dim, mean
	for i := range dim {
		if cov[i][i] > 0 {
			g.active[g.nAct] = i
			g.nAct++
		}
	}
	n := g.nAct
	if n == 0 {
		return g, true
	}
	// The calls distmv.NewNormal and Normal.TransformNormal (gonum
	// v0.17.0) make, without the condition estimate and the allocations
	// of a distmv.Normal: the upper triangle into an n x n array, its
	// Cholesky factor U by lapack64.Potrf (false when not positive
	// definite), then for a zero mean U^T e_b by blas64.Trmv plus the
	// zero mean, which is column b of L = U^T exactly; so the factor used
	// per draw is distmv's own (TestGaussMatchesDistmv).
	u := make([]float64, n*n)
	for a := range n {
		for b := a; b < n; b++ {
			u[a*n+b] = cov[g.active[a]][g.active[b]]
		}
	}
	tri, ok := lapack64.Potrf(blas64.Symmetric{Uplo: blas.Upper, N: n, Stride: n, Data: u})
	if !ok {
		return g, false
	}
	var e [3]float64
	for b := range n {
		e = [3]float64{}
		e[b] = 1
		blas64.Trmv(blas.Trans, tri, blas64.Vector{N: n, Inc: 1, Data: e[:n]})
		for a := range n {
			g.lower[a][b] = e[a] + 0 // distmv adds the mean, turning -0 into +0
		}
	}
	return g, true
}

// conditionalOnFirst returns the sampler of components 1..dim-1 given
// component 0, with zero mean (the caller adds the regression on component
// 0). With L = [[l11, 0], [L21, L22]] the covariance of the rest given the
// first, S22 - S21 S12 / S11, equals L22 L22^T (the block form of the
// Cholesky factorisation, e.g. Golub & Van Loan 2013, Matrix Computations,
// 4th ed., sec. 4.2.5), so the factor needs no second factorisation.
func (g *gauss) conditionalOnFirst() gauss {
	c := gauss{dim: g.dim - 1}
	skip := 0
	if g.nAct > 0 && g.active[0] == 0 {
		skip = 1
	}
	for a := skip; a < g.nAct; a++ {
		c.active[c.nAct] = g.active[a] - 1
		for b := skip; b <= a; b++ {
			c.lower[a-skip][b-skip] = g.lower[a][b]
		}
		c.nAct++
	}
	return c
}

// draw fills x[:dim] with one draw, taking nAct standard normals from rnd in
// the same order as distmv.Normal.Rand.
func (g *gauss) draw(rnd *stream, x *[3]float64) {
	*x = g.mean
	// Every component active, the usual case: the loop below written out
	// (same draws, same order of operations).
	if g.nAct == g.dim {
		l := &g.lower
		switch g.dim {
		case 3:
			z0, z1, z2 := rnd.norm(), rnd.norm(), rnd.norm()
			x[0] += l[0][0] * z0
			x[1] += l[1][0]*z0 + l[1][1]*z1
			x[2] += l[2][0]*z0 + l[2][1]*z1 + l[2][2]*z2
			return
		case 2:
			z0, z1 := rnd.norm(), rnd.norm()
			x[0] += l[0][0] * z0
			x[1] += l[1][0]*z0 + l[1][1]*z1
			return
		}
	}
	var z [3]float64
	for a := range g.nAct {
		z[a] = rnd.norm()
	}
	for a := range g.nAct {
		var s float64
		for b := 0; b <= a; b++ {
			s += g.lower[a][b] * z[b]
		}
		x[g.active[a]] += s
	}
}
