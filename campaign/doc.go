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
// negative radius, out-of-range probability, ...) is an *Error naming the
// file, the line and the key; Parse returns all of them as Errors. Lines of
// keys come from our own scan of the text, since the TOML library keeps key
// positions private.
//
// Decisions: a spectroscopic or photometric catalog without position_err_mas
// gets 100 mas (used only where ra_err/dec_err are absent or missing); the
// astrometric catalog gets none. radius_floor_arcsec without n_sigma > 0 is
// an error (it would do nothing). [potential] may name a built-in model or
// list components, not both; neither leaves Potential.Model empty for the
// caller's default. MatchHash, ModelHash and Hash are hex SHA-256 of the
// effective settings (paths relative to Dir, file contents excluded).
package campaign
