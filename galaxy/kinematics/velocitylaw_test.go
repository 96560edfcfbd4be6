package kinematics

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// The draws' velocities follow VelocityLaw at their own positions: the
// squared Mahalanobis distance of a draw from the law's mean is chi-square
// with 3 degrees of freedom (common practice), so over the draws its mean
// is 3 and 95 per cent of them lie below the distribution's 95th
// percentile (gonum's distuv.ChiSquared); and given the draw's distance
// its residual is independent of the draw's parallax. The star has strong
// parallax-pm correlations and a 20 per cent parallax, under each distance
// method that uses the parallax. A law that ignored the conditioning on
// the draw's parallax keeps the first two properties (it is the proper
// motions' marginal law) but not the third: measured with the
// conditioning removed, correlations of 0.60 and -0.64 (inverse) and 0.60
// and -0.60 (edsd) of the residuals along the two proper motions
// (2026-12-04).
func TestVelocityLawFollowsDraws(t *testing.T) {
	const n = 4000
	q95 := distuv.ChiSquared{K: 3}.Quantile(0.95)
	for _, method := range []string{MethodInverse, MethodEDSD} {
		s := baseStar("law")
		s.ParallaxMas, s.ParallaxErrMas = 0.25, 0.05
		s.CorrParallaxPMRA, s.CorrParallaxPMDec, s.CorrPMRAPMDec = 0.8, -0.7, -0.4
		s.PMRAErrMasYr, s.PMDecErrMasYr = 0.06, 0.05
		set := testSettings()
		set.Distance, set.Samples, set.KeepSamples = method, n, n
		r := eval(s, set)
		if !r.OK || len(r.SamplePos) != n {
			t.Fatalf("%s: evaluation failed or kept %d draws: %+v", method, len(r.SamplePos), r.Reasons)
		}
		var sum float64
		below := 0
		// The whitened residuals and the draw's parallax offset in sigma.
		var white [3][]float64
		var zw []float64
		for j, x := range r.SamplePos {
			m, c, ok := VelocityLaw(&s, &set, x)
			if !ok {
				t.Fatalf("%s: draw %d: no law", method, j)
			}
			cm := mat.NewSymDense(3, []float64{c[0][0], c[0][1], c[0][2], c[1][0], c[1][1], c[1][2], c[2][0], c[2][1], c[2][2]})
			var ch mat.Cholesky
			if !ch.Factorize(cm) {
				t.Fatalf("%s: draw %d: covariance not positive definite: %v", method, j, c)
			}
			v := r.SampleVel[j]
			d := mat.NewVecDense(3, []float64{v[0] - m[0], v[1] - m[1], v[2] - m[2]})
			var w mat.VecDense
			if err := ch.SolveVecTo(&w, d); err != nil {
				t.Fatal(err)
			}
			d2 := mat.Dot(d, &w)
			var l mat.TriDense
			ch.LTo(&l)
			var e mat.VecDense
			if err := e.SolveVec(&l, d); err != nil {
				t.Fatal(err)
			}
			for k := range 3 {
				white[k] = append(white[k], e.AtVec(k))
			}
			_, _, dist, _, _, _ := set.Sun.FromGalactocentric(x, v)
			zw = append(zw, (1/dist-s.ParallaxMas)/s.ParallaxErrMas)
			sum += d2
			if d2 < q95 {
				below++
			}
		}
		mean, share := sum/n, float64(below)/n
		t.Logf("%s: mean squared distance %.3f (want 3), %.3f below the 95th percentile", method, mean, share)
		// Given the draw's distance the residuals are independent of it:
		// a correlation with the draw's parallax offset is 0 within
		// 5/sqrt(n) = 0.08.
		for k := range 3 {
			if c := stat.Correlation(white[k], zw, nil); math.Abs(c) > 5/math.Sqrt(n) {
				t.Errorf("%s: whitened residual %d correlates with the draw's parallax: %.3f", method, k, c)
			}
		}
		// Standard errors: sqrt(6/n) = 0.039 for the mean, sqrt(0.05*0.95/n) = 0.0034 for the share.
		if math.Abs(mean-3) > 0.2 || math.Abs(share-0.95) > 0.015 {
			t.Errorf("%s: the draws do not follow the law: mean %.3f, share %.3f", method, mean, share)
		}
	}
}

// A star without a radial velocity or a proper motion has no law.
func TestVelocityLawRefuses(t *testing.T) {
	s := baseStar("law")
	set := testSettings()
	s.PMRAMasYr = math.NaN()
	if _, _, ok := VelocityLaw(&s, &set, [3]float64{0, 5, 1}); ok {
		t.Error("a law without a proper motion")
	}
	s = baseStar("law")
	s.RVKms = math.NaN()
	if _, _, ok := VelocityLaw(&s, &set, [3]float64{0, 5, 1}); ok {
		t.Error("a law without rv")
	}
}
