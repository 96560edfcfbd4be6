// Package kinematics turns a star's astrometry and radial velocity into
// Galactic rest-frame kinematics with Monte Carlo uncertainties, and the
// probability that the star is unbound from a Galactic potential.
//
// In: a Star (ra, dec in deg ICRS; parallax and its error in mas;
// mu_alpha* = mu_alpha cos dec and mu_delta in mas/yr with errors and the
// three correlations; rv in km/s; optional independent distance in kpc or
// distance modulus in mag; NaN = missing, a missing correlation = 0),
// Settings, and a potential.Potential (kpc, (km/s)^2).
//
// Out: a Result per star: the distance method used, reasons, the 16th, 50th
// and 84th percentiles of distance (kpc), Galactocentric radius (kpc),
// speed, radial and tangential velocity about the Galactic centre and
// escape speed (km/s), the share of draws faster than the escape speed at
// their own position, the nominal position and velocity, and the first
// KeepSamples draws for orbit tracing. Vectors are in the Galactocentric
// frame of frames.Sun.ToGalactocentric.
//
// Distances (Settings.Distance):
//   - inverse: d = 1/(w - zp) per draw. A non-positive measured parallax is
//     a fatal reason; draws with w - zp <= 0 are dropped and counted in a
//     reason (this truncates the parallax posterior at zero).
//   - edsd: the posterior with prior P(r) ∝ r^2 exp(-r/L) times the normal
//     parallax likelihood (Bailer-Jones 2015, PASP 127, 994), tabulated per
//     star on a 512-point grid uniform in ln r spanning every mode (roots
//     of r^3/L - 2r^2 + (w/s^2) r - 1/s^2 = 0) out to where the density is
//     exp(-36) of its peak (CDF error below 1e-4), and sampled by inverse
//     CDF. The proper motions are then drawn from their normal conditional
//     on the true parallax 1/r; with a flat prior on the true proper
//     motions this is the exact joint posterior, so parallax-pm
//     correlations are kept.
//   - catalog: the independent distance, normal in kpc truncated at d > 0,
//     or, when a distance modulus is given (it is preferred), normal in mag
//     with d = 10^(mu/5+1) pc. When the star also has a parallax, the
//     catalog distance is the prior and the parallax the likelihood: the
//     posterior is tabulated per star as for edsd (512 points uniform in
//     ln d where it is within exp(-36) of its peak) and sampled by inverse
//     CDF, and the proper motions come from their normal conditional on
//     1/d, as for edsd. A parallax that admits less than 1/200 of the
//     catalog distance's probability is a fatal reason, less than 5% a
//     note.
//     Without a parallax the proper motions come from their own normal.
//   - auto (default): inverse when (w - zp)/s >= MinParallaxSignificance, else
//     catalog when usable, else edsd.
//
// Monte Carlo: (parallax, pm_ra, pm_dec) are drawn jointly from the normal
// with the catalog's correlations (the factor gonum's distmv.Normal makes,
// computed once per star with LAPACK's Potrf, which checks positive
// definiteness (draw.go); a failure is a
// fatal reason; the proper motions' factor given the parallax, for edsd and
// catalog, is the lower block of the same factor); components with zero
// error stay at their measured values, so zero errors give the
// deterministic answer. rv is drawn from its normal. Each star has its own
// xoshiro256++ streams (Blackman & Vigna 2021, ACM Trans. Math. Softw. 47,
// 36; one for astrometry and distance, one for rv, one for the proper
// motions of tabulated distances; math/rand/v2's ziggurat normals, bit for
// bit, on a concrete type) seeded from Settings.Seed and an FNV-1a hash of
// its ID, so its numbers do not depend on the order of the stars, the batch
// or the worker count, and adding an rv leaves the astrometric draws
// unchanged.
//
// Velocity prior (Settings.VelocityPriorKms = sigma > 0, stars with a
// usable rv): the draws are importance-weighted by exp(-|v|^2/(2 sigma^2)),
// |v| the Galactocentric speed of the draw, and replaced by a systematic
// resample to equal weights; PUnbound is the weighted share, PUnboundFlat
// the unweighted one, and the traced draws are spread over the resample. A
// star whose effective sample size falls below a fifth of its draws gets
// ReasonPriorDominated. See prior.go for why and for the sources.
//
// Early stopping (Settings.StopBelowP > 0; off by default): the draws come
// in blocks continuing the star's own streams, 64 and then doubling up to
// Samples. After each block short of Samples the star is summarised as if
// it ended there, and it stops (Result.Stopped, Result.Samples the draws
// used) when the exact one-sided upper limit of Clopper & Pearson 1934
// (Biometrika 26, 404) on its unbound share, at StopSigma's one-sided
// Gaussian tail divided among the looks (Bonferroni), lies below
// StopBelowP, unless its speed's 84th percentile exceeds TailEscFraction of
// its median escape speed (such a star always gets every draw). With the
// velocity prior the share is the weighted one and n is Kish's effective
// sample size (sum w)^2 / sum w^2 (Kish 1965, Survey Sampling). A star that
// does not stop gets exactly the result it gets without early stopping.
//
// Percentiles are exact order statistics (Hyndman & Fan 1996 definition
// 7), found by one distribution pass into 256 value buckets instead of a
// sort; speeds, r_gc, v_esc and v_tan are kept squared per draw and the
// square root is taken of the selected order statistics only.
//
// Without a usable rv (missing value or missing error) the speed is not
// known. Since v(rv) = v(0) + rv u (u the unit line of sight), the minimum
// over rv of |v| is |v(0) - (v(0).u) u|: that bound is reported as
// SpeedLowerKms with PUnboundLower, and HasRV is false; SpeedKms,
// VRadialKms, VTangentialKms and PUnbound are NaN.
//
// Escape speed: sqrt(2 (Phi(r_lim) - Phi(x))), Phi(r_lim) = 0 for escape to
// infinity, else Phi at EscapeRadiusKpc along the direction of x; zero at
// or beyond the escape radius. Along a line of sight the position depends on
// the distance only, so the escape speed is tabulated per star over the
// drawn distances (adaptive cubic Hermite in distance with slopes from the
// acceleration, split until at every cell midpoint the value error plus a
// quarter cell times the slope error is within 1e-4 km/s; a fine sweep of
// the tables of 300 invented stars finds at most 1e-4 km/s anywhere; exact
// evaluation per draw when the table would need more than one cell per 8
// draws, or for fewer than 128 draws). When the table is monotone
// (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17, 238) draws faster or
// slower than its whole range need no lookup for p_unbound, and the v_esc
// median, like the r_gc median when r_gc is monotone in distance, follows
// from the distance's two middle order statistics. The potential must be
// safe for concurrent use (EvaluateAll shares it).
//
// Entry points: Evaluate for one star, EvaluateAll for many on several
// goroutines (ctx checked between batches of 64 stars).
package kinematics
