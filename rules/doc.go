// Package rules loads declarative, versioned quality-cut rule sets.
//
// In: a TOML file (or the embedded default, rules/default.toml) and a Schema
// naming the campaign's secondary catalogs in campaign order. Out: a
// RuleSet whose rules are type-checked, compiled once, sorted by id (the
// order of evaluation and reporting) and fingerprinted.
//
// File format:
//
//	name = "my-cuts"           # required
//	version = "3"              # required
//	[[rule]]
//	id = "fit-residual"        # required, [a-z0-9]+(-[a-z0-9]+)*, unique
//	severity = "reject"        # required: reject | flag
//	check = "fit_residual"     # a built-in check, or instead:
//	expr = "pm_total < 400"    # an expression that is TRUE for a good star
//	when = "is_missing(distance)"  # optional precondition; false => skipped
//	limit = 1.4                # check parameters (see below)
//	description = "..."        # optional, shown by `starvet rules show`
//	source = "..."             # optional, where the threshold comes from
//
// Built-in checks and their parameters (units are the canonical ones of
// starvet/catalog):
//
//	at_least / at_most         field, limit      field >= / <= limit
//	parallax_significance      limit             (parallax - zero point)/parallax_err >= limit
//	fit_residual               limit             fit_residual <= limit
//	excess_noise_significance  limit             excess_noise_sig <= limit
//	fit_visits         limit             fit_visits >= limit
//	duplicate                  (none)            duplicate_flag != 1 and dup_count == 0
//	match                      catalog, min_prob, max_sep_arcsec, allow_ambiguous
//	rv_precision               limit             rv_err <= limit (km/s)
//	spectrum_snr               limit             snr >= limit
//	required_fields            fields            every listed field present
//
// A match rule's catalog is a secondary catalog name, or "*" for every
// secondary catalog of the campaign. A star with no counterpart in a
// catalog is not tested against it ("no counterpart" is not a bad match);
// with no counterpart anywhere the rule is skipped.
//
// Expressions use github.com/expr-lang/expr, type-checked against this
// environment: every canonical field name (float64, NaN when missing),
// parallax_significance (zero-point corrected), pm_total (mas/yr), dup_count,
// and for each secondary catalog C (its name with characters other than
// letters, digits and "_" turned into "_"): C_match_prob, C_sep_arcsec,
// C_candidates (float64), C_ambiguous, C_matched (bool); plus
// is_missing(x). An expression is TRUE for a good star. It is skipped, not
// evaluated, when one of its float inputs is NaN, so that a NaN comparison
// never decides a verdict, unless it handles missing values itself: it
// calls is_missing (then it is always evaluated as written), or it reads
// C_matched (then C_match_prob and C_sep_arcsec may be NaN for a star
// without a counterpart in C).
//
// Schema.AnyCatalog accepts every catalog name the file uses, for checking
// a file without a campaign.
//
// Fingerprints are SHA-256 over a canonical JSON form of each rule (id,
// severity, check, parameters, expression and precondition re-printed from
// their syntax trees); the set's fingerprint hashes the sorted rule
// fingerprints. Comments, layout, rule order, description, source, name
// and version do not change them.
//
// Load errors are position.Errors (starvet/internal/position): every
// problem, in file order, each a *position.Error with file, line and column
// (1-based), Name the rule id and What `rule "ID"` (or `rule #N (no id)`
// for the N-th rule of the file when it has no id), wrapping one of the
// Err* sentinels; printed as FILE:LINE:COL: rule "ID": message. The line
// and column are the offending key's, else the rule's [[rule]] header's
// (for an inline array of rule tables, those of "rule ="), found by
// starvet/internal/tomlpos since the TOML decoder reports no positions of
// decoded keys. An expression reports the first problem the expr checker
// finds, with its column inside the expression.
package rules
