// Package crossmatch pairs the sources of two catalogs by sky position.
//
// # Input
//
// Two *catalog.Table in canonical units: ra, dec in degrees (ICRS, at the
// table's EpochJyr), ra_err and dec_err in mas, pm_ra (mu_alpha*) and
// pm_dec in mas/yr with their errors, parallax in mas, rv in km/s. NaN is a
// missing value, a nil column an absent one. ra and dec columns are
// required; a row with either NaN is never matched and is counted in
// Stats.
//
// # Match
//
// Match(ctx, primary, secondary, opt) returns one Counterpart per primary
// row (same order):
//
//  1. Each primary position is moved from primary.EpochJyr to
//     secondary.EpochJyr with sky.Propagate (rigorous space motion when
//     parallax and rv are known, great-circle motion otherwise). Rows
//     without a proper motion stay put (Stats.NotPropagated).
//  2. Circular positional error per row, mas:
//     sigma^2 = (ra_err^2 + dec_err^2)/2 + ((pm_ra_err^2 + pm_dec_err^2)/2) dt^2
//     for the primary (dt = epoch difference, years; the second term only
//     when the row was propagated and has pm errors), the first term alone
//     for the secondary. A row with neither ra_err nor dec_err uses the
//     catalog's fallback (Options.PrimaryPosErrMas / SecondaryPosErrMas);
//     without a fallback Match fails naming catalog, line and column.
//  3. Candidates: secondary rows within RadiusArcsec (default 1") of the
//     propagated position, or, when NSigma > 0, within
//     max(NSigma sqrt(s1^2+s2^2), RadiusFloorArcsec) per pair. The search
//     uses the largest radius any pair of that primary could need, then
//     filters; separations are exact (sky.Separation).
//  4. Bayes factor of each candidate for circular normal errors
//     (Budavari & Szalay 2008, ApJ 679, 301):
//     B = 2/(s1^2+s2^2) exp(-psi^2 / (2 (s1^2+s2^2))), radians, and the
//     posterior P = [1 + (1-P0)/(B P0)]^-1.
//  5. Prior P0 = N* / (N1 N2). The sky is cut into 2048 equal-area cells
//     (32 bands equal in sin(dec) x 64 ra ranges, ~20.1 deg^2 each); the
//     overlap is the set of cells holding sources of both catalogs (the
//     primary at the secondary epoch), N1 and N2 are the counts of each
//     catalog in those cells and N* = min(N1, N2): we assume every source of
//     the smaller catalog inside the overlap has a counterpart. Result.Prior
//     and Result.OverlapSqDeg report it.
//  6. One-to-one: global greedy over all candidate pairs by posterior
//     descending (ties: lower primary row, then lower secondary row); a pair
//     is taken when neither side is taken yet.
//  7. Ambiguous: the primary's best candidate (largest B) has a rival
//     candidate with B >= B_best / AmbiguityRatio (default 3), or another
//     primary also has that secondary as a candidate with a Bayes factor
//     within a factor AmbiguityRatio of the primary's own (both the winner
//     and the loser are marked).
//
// A primary with no match has Secondary -1, CounterpartID "", SepArcsec and
// BayesFactor NaN, Prob 0; Candidates still counts what was within the
// radius. Results do not depend on Options.Workers.
//
// # SelfMatch
//
// SelfMatch(ctx, t, radiusArcsec, workers) counts, per row, the other rows of
// the same table strictly closer than radiusArcsec at the table's own
// epoch (-1 for a row without position).
//
// # Index
//
// Index is the sky index used by both (the only user of the rtree module):
// declination zones of 0.5 deg, each an rtree of runs of 16 points ordered
// by ra bin; query boxes are split at ra 0/360, cover all ra when the cap
// reaches a pole, and have an ra half-width r / cos(dec) at the cap's
// extreme |dec|. Every box hit is confirmed with sky.Separation, so Within
// returns exactly the rows within the radius.
package crossmatch
