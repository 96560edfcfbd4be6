// Package quality evaluates a compiled rule set (package rules) on stars.
//
// In: Star values — merged canonical fields in the units of
// starvet/catalog (NaN = missing), one MatchInfo per secondary
// catalog in RuleSet.Catalogs order (a shorter slice means "no
// counterpart"), and the self-match duplicate count; plus a Context with the
// campaign's parallax zero point in mas (subtracted: parallax - zero point).
//
// Out: an Assessment per star. Outcomes come in the rule set's order
// (sorted by rule id), one per rule, every rule evaluated even after a
// reject. Rules are evaluated cheap first: built-in checks without a
// precondition, then the rules that run an expression; the order of
// evaluation never changes an outcome. Result is pass, fail or skipped; a missing or NaN input is never a
// pass: it is skipped with the reason in Message ("skipped: snr missing"),
// except for required_fields, which fails. Quality is reject if any reject
// rule failed, else flag if any flag rule failed, else pass; FailedRules
// lists the failed rule ids in order. Skipped rules do not change Quality.
//
// Messages: a failure spells out what was measured, e.g. "fit_residual
// 2.31 > 1.4" (numbers to 4 decimals unless that would hide the difference
// from the limit), a skip says why ("skipped: parallax missing"), and a pass
// states the condition met ("fit_residual <= 1.4"); the measured number is
// always in Value. Pass and routine skip messages are fixed per rule, so a
// star that passes everything costs no formatting and no allocation.
//
// Per check: single-value checks put the measured value in Value. duplicate fails on
// duplicate_flag == 1 or DupCount > 0; the self-match count is always
// known, so a missing catalog flag alone does not skip it (the message says
// the flag was missing). match tests each catalog of the rule in which the
// star has a counterpart; it fails if any counterpart fails, is skipped when
// there is no counterpart at all or when a needed value is NaN and nothing
// failed; Value is the lowest posterior tested. required_fields has the
// number of missing fields as Value.
//
// Speed: Evaluator is read-only and safe for concurrent use; Assess reuses
// the caller's Assessment (at most one string allocation per star, for
// the messages that are not fixed). AssessAll and Each spread stars over worker goroutines
// (internal/parallel; default GOMAXPROCS) in batches, checking ctx between
// batches.
package quality
