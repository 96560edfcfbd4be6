package kinematics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distmv"
)

// The conditional factor taken from the joint one reproduces the Schur
// complement S22 - S21 S12 / S11 (the conditional covariance of a normal,
// Anderson 2003, An Introduction to Multivariate Statistical Analysis, 3rd
// ed., theorem 2.5.1), also when a component has zero variance.
func TestConditionalOnFirst(t *testing.T) {
	for _, tc := range []struct {
		name       string
		sd         [3]float64
		corr       [3]float64 // (0,1), (0,2), (1,2)
		wantActive int
	}{
		{"all", [3]float64{0.1, 0.2, 0.15}, [3]float64{0.3, -0.4, 0.2}, 2},
		{"strong", [3]float64{0.05, 0.03, 0.03}, [3]float64{0.9, 0.8, 0.75}, 2},
		{"no-parallax-error", [3]float64{0, 0.2, 0.15}, [3]float64{0, 0, 0.5}, 2},
		{"no-pm-ra-error", [3]float64{0.1, 0, 0.15}, [3]float64{0, -0.4, 0}, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s, c := tc.sd, tc.corr
			cov := [3][3]float64{
				{s[0] * s[0], c[0] * s[0] * s[1], c[1] * s[0] * s[2]},
				{c[0] * s[0] * s[1], s[1] * s[1], c[2] * s[1] * s[2]},
				{c[1] * s[0] * s[2], c[2] * s[1] * s[2], s[2] * s[2]},
			}
			joint, ok := newGauss(3, [3]float64{}, &cov)
			if !ok {
				t.Fatal("not positive definite")
			}
			g := joint.conditionalOnFirst()
			if g.nAct != tc.wantActive || g.dim != 2 {
				t.Fatalf("dim %d, %d active, want 2, %d", g.dim, g.nAct, tc.wantActive)
			}
			// Rebuild the conditional covariance from the factor.
			var got [2][2]float64
			for a := range g.nAct {
				for b := range g.nAct {
					var v float64
					for k := range 3 {
						v += g.lower[a][k] * g.lower[b][k]
					}
					got[g.active[a]][g.active[b]] = v
				}
			}
			for i := range 2 {
				for j := range 2 {
					want := cov[i+1][j+1]
					if cov[0][0] > 0 {
						want -= cov[0][i+1] * cov[0][j+1] / cov[0][0]
					}
					if math.Abs(got[i][j]-want) > 1e-14*cov[i+1][i+1] {
						t.Errorf("conditional cov[%d][%d] = %v, want %v", i, j, got[i][j], want)
					}
				}
			}
		})
	}
}

// distmvFactor is the factor newGauss took from distmv before it called
// the same gonum routines itself: column b of L is the transform of e_b by a
// zero-mean distmv.Normal.
func distmvFactor(n int, cov *[3][3]float64) (l [3][3]float64, ok bool) {
	sym := mat.NewSymDense(n, nil)
	for a := range n {
		for b := a; b < n; b++ {
			sym.SetSym(a, b, cov[a][b])
		}
	}
	var zero, e, col [3]float64
	nrm, ok := distmv.NewNormal(zero[:n], sym, rand.NewPCG(1, 2))
	if !ok {
		return l, false
	}
	for b := range n {
		e = [3]float64{}
		e[b] = 1
		nrm.TransformNormal(col[:n], e[:n])
		for a := range n {
			l[a][b] = col[a]
		}
	}
	return l, true
}

// TestGaussFactorMatchesDistmv: newGauss's factor and positive-definiteness
// verdict are distmv's bit for bit, over random covariances with exact zero
// and opposite-sign correlations, correlations of +-1 and some zero
// variances.
func TestGaussFactorMatchesDistmv(t *testing.T) {
	rnd := rand.New(rand.NewPCG(9, 10))
	pick := func() float64 {
		switch rnd.IntN(6) {
		case 0:
			return 0
		case 1:
			return 1 - 2*float64(rnd.IntN(2))
		}
		return 2*rnd.Float64() - 1
	}
	for i := range 20000 {
		var sd [3]float64
		for k := range sd {
			sd[k] = math.Exp(4 * rnd.NormFloat64())
			if rnd.IntN(8) == 0 {
				sd[k] = 0
			}
		}
		c := [3]float64{pick(), pick(), pick()}
		cov := [3][3]float64{
			{sd[0] * sd[0], c[0] * sd[0] * sd[1], c[1] * sd[0] * sd[2]},
			{c[0] * sd[0] * sd[1], sd[1] * sd[1], c[2] * sd[1] * sd[2]},
			{c[1] * sd[0] * sd[2], c[2] * sd[1] * sd[2], sd[2] * sd[2]},
		}
		g, ok := newGauss(3, [3]float64{}, &cov)
		// distmv on the active block, as newGauss builds it.
		var act [3][3]float64
		for a := range g.nAct {
			for b := range g.nAct {
				act[a][b] = cov[g.active[a]][g.active[b]]
			}
		}
		if g.nAct == 0 {
			continue
		}
		want, wantOK := distmvFactor(g.nAct, &act)
		if ok != wantOK {
			t.Fatalf("case %d: ok %v, distmv %v (cov %v)", i, ok, wantOK, cov)
		}
		if !ok {
			continue
		}
		for a := range 3 {
			for b := range 3 {
				if math.Float64bits(g.lower[a][b]) != math.Float64bits(want[a][b]) {
					t.Fatalf("case %d: L[%d][%d] = %v, distmv %v (cov %v)", i, a, b, g.lower[a][b], want[a][b], cov)
				}
			}
		}
	}
}
