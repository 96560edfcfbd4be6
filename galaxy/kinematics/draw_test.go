package kinematics

import (
	"math"
	"math/rand/v2"
	"testing"
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
			joint, ok := newGauss(3, [3]float64{}, &cov, rand.NewPCG(1, 2))
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
