package kinematics

import (
	"math"

	"gonum.org/v1/gonum/mathext"
)

// Early stopping (Settings.StopBelowP > 0). A star draws in blocks that
// continue its own streams: a first block of stopFirstBlock draws, then the
// count doubles (64, 128, 256, 512, ...) up to Settings.Samples. After each
// block short of Samples (a "look") the star is summarised as if it ended
// there, and it stops when the one-sided upper confidence bound on its
// unbound share lies below StopBelowP and its speed's 84th percentile is
// at most TailEscFraction of the median escape speed; a star that fails
// the latter at a look draws straight on to Samples. Otherwise it draws
// on, and its result once it reaches Samples is exactly the one without
// early stopping (the blocks are the same draws in the same order).
//
// Both tests read the look's own estimates, so a star near the tail
// threshold stops more readily when its first draws happen to be slow, and
// its percentiles then lean low by up to a few of their Monte Carlo errors
// (TestEarlyStoppingAgrees allows 4). An upper confidence bound on the
// percentile instead (at 5 sigma, the largest of 64 draws) removes most
// of that but kept disc-like stars (v about 0.42 v_esc) from ever
// stopping: 632 instead of 493 draws per bench star (commit 693a20e).
//
// 64 draws are enough for k = 0 to stop below 0.5 at 5 sigma with the
// looks' share of the error (1 - (2.87e-7/4)^(1/64) = 0.23); doubling keeps
// the number of looks, and so the repeated summaries, logarithmic in
// Samples (at most 4 looks for 1000 draws, about 1000 extra draws'
// worth of summaries for a star that never stops).
const stopFirstBlock = 64

// stopLooks is the number of looks a star with samples draws can have.
func stopLooks(samples int) int {
	looks := 0
	for m := stopFirstBlock; m < samples; m *= 2 {
		looks++
	}
	return looks
}

// nextBlockEnd is where the block after draw count done ends: the next
// look, or samples.
func nextBlockEnd(done, samples int) int {
	if done == 0 {
		return min(stopFirstBlock, samples)
	}
	return min(2*done, samples)
}

// stopAlpha is the tail probability of each look: the one-sided Gaussian
// tail beyond sigma, shared equally among the looks (Bonferroni; e.g.
// Dunn 1961, J. Am. Stat. Assoc. 56, 52), so that a star whose true share
// is at or above StopBelowP stops at some look with probability at most
// the tail beyond sigma.
func stopAlpha(sigma float64, samples int) float64 {
	tail := 0.5 * math.Erfc(sigma/math.Sqrt2)
	return tail / float64(max(1, stopLooks(samples)))
}

// binomialUpper is the exact one-sided upper confidence limit on a
// binomial proportion after k successes in n trials at tail probability
// alpha (Clopper & Pearson 1934, Biometrika 26, 404): the p at which
// P(X <= k | n, p) = alpha. Since P(X <= k) = 1 - I_p(k+1, n-k)
// (Abramowitz & Stegun 1964, 26.5.24, from memory), p is the 1-alpha
// quantile of Beta(k+1, n-k), computed as 1 - I^-1_alpha(n-k, k+1) so
// that a small alpha loses no precision; for k = 0 it is
// 1 - alpha^(1/n), and 1 for k >= n. Through the beta form k and n may be
// effective (non-integer) counts.
func binomialUpper(k, n, alpha float64) float64 {
	switch {
	case !(n > 0) || k >= n:
		return 1
	case k <= 0:
		return -math.Expm1(math.Log(alpha) / n)
	}
	return 1 - mathext.InvRegIncBeta(n-k, k+1, alpha)
}

// upperBound is Result.PUnboundUpper for r, summarised from its draws:
// the unbound share (PUnbound with a radial velocity, PUnboundLower
// without) as k/n with n the effective sample size (Kish 1965, Survey
// Sampling, section 11.7: (sum w)^2 / sum w^2, which is the draw count
// without weights).
func upperBound(r *Result, alpha float64) float64 {
	p := r.PUnboundLower
	if r.HasRV {
		p = r.PUnbound
	}
	return binomialUpper(p*r.EffectiveSamples, r.EffectiveSamples, alpha)
}

// fastTail reports whether r's speed reaches past tailFraction of its
// median escape speed at the 84th percentile (true when either is NaN or
// the escape speed is not positive).
func fastTail(r *Result, tailFraction float64) bool {
	v84 := r.SpeedLowerKms[2]
	if r.HasRV {
		v84 = r.SpeedKms[2]
	}
	return !(v84 <= tailFraction*r.VEscKms[1]) || !(r.VEscKms[1] > 0)
}
