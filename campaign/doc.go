// Package campaign reads campaign files: one TOML file per vetting campaign
// naming its catalogs, match settings, Solar parameters, Galactic potential
// and kinematics settings.
//
// In: the file text (Load reads it from disk). Out: a *Campaign with every
// default filled in and relative paths resolved against the file's
// directory (Campaign.Dir); catalog specs are ready for ingest.Read
// (package catalog/ingest).
// Units are those in the key names (arcsec, mas, kpc, pc, km/s, Msun, Myr);
// epochs are Julian years; sun_velocity_kms is (U, V, W) in the
// Galactocentric frame.
//
// Any problem (unknown key, unknown canonical field or unit, bad role, not
// exactly one astrometry catalog, duplicate or malformed catalog name,
// negative radius, out-of-range probability, ...) is a *position.Error
// (starvet/internal/position) naming the file, the 1-based line and column
// and the dotted key (What and Name, catalogs numbered from 1:
// "catalog[2].role"), wrapping one of the Err* sentinels and printed as
// FILE:LINE:COL: key: message; Parse returns all of them as
// position.Errors, in file order, problems without a place (no astrometry
// catalog) last. Text that is not TOML, or a value of the wrong type, is a
// single *position.Error wrapping ErrSyntax. Positions of keys come from
// starvet/internal/tomlpos, since the TOML library keeps them private.
//
// Every setting that holds one value (seed, parallax zero point, [match],
// [galaxy], the escape radius, [kinematics]) is defined once, in the table
// of settings.go: its key, which is also the name the ledger records it
// under, its default, its bound and its meaning. Decoding, defaults,
// checks and Values (what vetting records) are derived from it; a test
// keeps db/SCHEMA.md's run_settings rows equal to it.
//
// Decisions: a spectroscopic or photometric catalog without position_err_mas
// gets 100 mas (used only where ra_err/dec_err are absent or missing); the
// astrometric catalog gets none. radius_floor_arcsec without n_sigma > 0 is
// an error (it would do nothing). [potential] may name a built-in model or
// list components, not both; neither leaves Potential.Model empty for the
// caller's default. MatchHash, ModelHash and Hash are hex SHA-256 of the
// effective settings (paths relative to Dir, file contents excluded).
package campaign
