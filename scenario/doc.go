// Package scenario writes an invented demo campaign with known answers and
// scores a run against them.
//
// Generate(cfg, dir) draws a toy Milky Way (thin and thick disks, stellar
// halo; positions and velocities in the Galactocentric frame of
// vetting/frames with frames.DefaultSun, in the potential
// potential.DefaultModel), injects stars whose fate is known (Galactic
// Centre ejectees integrated with vetting/orbit, disk runaways, bound fast
// halo stars) and traps (binaries with spoilt fits, duplicated sources,
// radial-velocity outliers, crowded-field neighbours, high proper-motion
// stars, rows with impossible values), observes them with an invented but
// realistically shaped error model, and writes into dir:
//
//   - pelmarra_rN.csv.gz: the primary astrometric catalog (ids "PL-0000001"),
//     ICRS positions at epoch 2019.5 (deg), errors and parallax in mas,
//     proper motions in mas/yr (pm_ra = mu_alpha*), fit-quality columns and
//     mag. Headers src, plx, plx_err differ from the canonical names.
//   - vossbeck_rN.csv: spectroscopy over dec > -20 deg and |b| > 10 deg at
//     epoch 2011.5 (ids "VB-000001"), rv and rv_err in m/s, snr, and for
//     stars beyond 3 kpc a distance modulus (mag) with a 10-20 per cent
//     distance error.
//   - tirrel.csv: photometry at epoch 2000.0 (ids "TR-0000001"), ra in
//     hours, position errors in arcsec, mag and colour.
//   - campaign.toml naming the three catalogs, their mappings and units, the
//     Sun and the potential model; truth.csv (one line per primary row, see
//     TruthRow) and bad_rows.csv (file, line, column of every impossible
//     value, which a correct ingest quarantines).
//
// Every survey name, id and star is made up. The output depends on the
// Config alone (math/rand/v2 PCG streams seeded from Config.Seed) and is
// byte-identical from run to run.
//
// Update(s, dir, seed) writes release N+1: revised astrometry for about 2 per
// cent of the ordinary stars, the spectra held back from release 1, a new
// campaign.toml with the new file names and release labels, and the new
// truth; s.Changed lists the primary ids whose inputs changed.
//
// Score(truth, verdicts) compares final statuses (verdict.Status) and
// origins (orbit.Origin, also the words of truth.csv's origin_true), keyed by
// primary id, with the truth: completeness over injected, truly unbound
// stars with adequate data whose speed exceeds the escape speed by at least
// DecidableSigma times the uncertainty their errors imply (speedMargin, a
// first-order propagation; the completeness over every margin is reported
// too), contamination among stars ending "unbound",
// origin accuracy of Galactic Centre ejectees, and trap counts. The demo
// targets are completeness >= 95 per cent and contamination <= 2 per cent.
package scenario
