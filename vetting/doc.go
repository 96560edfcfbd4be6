// Package vetting is the pipeline of a vetting campaign: it ties the stages
// together and hands every star's verdict to the ledger.
//
// In: a *campaign.Campaign (its catalogs, match settings, rule set, Solar
// parameters, potential and Monte Carlo settings) and RunOptions.
//
// Stages, each taking the previous stage's value:
//
//	Ingest     catalog files  -> Catalogs (columnar tables in canonical units, quarantine)
//	Match      Catalogs       -> Matched (one counterpart per primary row and secondary, duplicate counts)
//	mergeAll   both           -> one quality.Star per primary row and its input hash
//	Assess     stars          -> quality.Assessment per star (rules package)
//	kinematics accepted stars -> Monte Carlo Galactocentric speed, escape speed, p_unbound
//	                             (subpackage kinematics, potential), back-traces of the fast
//	                             ones (subpackage orbit)
//	Run        all of it      -> db ledger rows: inputs, matches, reasons, crossings, verdicts
//
// Units: every number is canonical from ingest on (see
// starvet/catalog): degrees, mas, mas/yr, km/s, kpc; the
// Galactocentric frame of starvet/galaxy/frames (x from the Sun toward the
// centre, y along rotation, z toward the north Galactic pole); times in Myr.
//
// Run, in steps (one file each): settings.go builds the run's settings once
// from the campaign and RunOptions; run.go ingests, matches and hashes while
// the previous complete run's state is read; plan.go decides, without the
// ledger, which stars to compute, carry or withdraw; compute.go runs
// quality, Monte Carlo and tracing for the stars to compute; verdict.go
// turns the result into a status and reasons; write.go writes the batches
// (overlapping the next batch's computation) and closes the run.
//
// Statuses (the words of starvet/verdict, stored as TEXT): rejected (a
// reject rule failed, or the kinematics could not be computed), needs-rv,
// bound, marginal (p_unbound at or above the campaign's marginal level),
// unbound (at or above its unbound level) and withdrawn. An unbound
// verdict depends on the adopted potential and Solar parameters and marks a
// candidate for follow-up, not a discovery.
//
// Incremental runs: a star is recomputed only when its input hash (merged
// canonical values, match results, duplicate count) or the rule set's or the
// model's fingerprint changed since the last complete run; otherwise its
// verdict is carried forward with computed_in_run naming the run that
// computed it. Per-star work is a pure function of the star's inputs, the
// settings and the seed, so an incremental run gives exactly the verdicts
// of a full one, and the stages use every core.
package vetting
