package kinematics

import "math"

// The velocity prior. With Settings.VelocityPriorKms = sigma > 0 the Monte
// Carlo draws, which sample the likelihood of the measured parallax, proper
// motions and rv (a flat prior on the true proper motions and rv), are
// reweighted by an isotropic normal prior on the Galactocentric velocity,
//
//	p(v) ∝ exp(-|v|^2 / (2 sigma^2)),
//
// by importance weighting (e.g. Gelman et al. 2013, Bayesian Data
// Analysis, 3rd ed., section 10.4), then resampled systematically
// (Kitagawa 1996, J. Comput. Graph. Stat. 5, 1) to equal weights, so that
// the percentiles, the medians and the traced draws all describe the same
// posterior; p_unbound is the weighted share itself. Where the data are
// precise the likelihood dominates and the prior changes little; where the
// proper-motion errors at large distance are hundreds of km/s, the flat
// prior lets noise alone carry a bound star past the escape speed (the
// length of a noisy vector is biased upward), and the prior keeps such a
// star from being called unbound. It is a conservative choice: an unbound
// verdict must overcome a prior that expects a bound halo star.

// minPriorESSShare: below this effective share of the draws a star gets
// ReasonPriorDominated.
const minPriorESSShare = 0.2

// priorResample weights draw i by exp(-speed2[i] / (2 sigma^2)) and fills
// idx (len(speed2)) with the indices of a systematic resample to equal
// weights, nondecreasing. u in [0, 1) is the resample's one random offset;
// wt is scratch of len(speed2). It returns the weighted share of the draws
// marked unbound and the effective sample size
// (sum w)^2 / sum w^2 (Kish 1965, Survey Sampling, section 11.7).
func priorResample(speed2 []float64, unbound []bool, sigmaKms, u float64, wt []float64, idx []int) (pUnbound, ess float64) {
	minSq := math.Inf(1)
	for _, v2 := range speed2 {
		minSq = min(minSq, v2)
	}
	return priorResampleMin(speed2, minSq, unbound, sigmaKms, u, wt, idx)
}

// priorResampleMin is priorResample with the smallest of speed2 known
// (minSq, as min over speed2 gives it; the largest weight is then 1).
func priorResampleMin(speed2 []float64, minSq float64, unbound []bool, sigmaKms, u float64, wt []float64, idx []int) (pUnbound, ess float64) {
	n := len(speed2)
	inv := 1 / (2 * sigmaKms * sigmaKms)
	var sum, sum2, ub float64
	for i, v2 := range speed2 {
		w := math.Exp(-(v2 - minSq) * inv)
		wt[i] = w
		sum += w
		sum2 += w * w
		if unbound[i] {
			ub += w
		}
	}
	step := sum / float64(n)
	next := step * u
	c, j := wt[0], 0
	for i := range n {
		for c <= next && j < n-1 {
			j++
			c += wt[j]
		}
		idx[i] = j
		next += step
	}
	return ub / sum, sum * sum / sum2
}

// gather replaces x[:len(idx)] by x[idx[i]], through tmp.
func gather(x, tmp []float64, idx []int) {
	copy(tmp, x[:len(idx)])
	for i, j := range idx {
		x[i] = tmp[j]
	}
}
