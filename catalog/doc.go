// Package catalog defines starvet's canonical catalog fields and reads
// catalog files into columnar tables.
//
// In: a Spec (file path, .csv or .csv.gz by suffix; a map from canonical
// field name to file header; the units the file uses where they differ from
// the canonical ones; null markers; a fallback positional error). A header
// that equals a canonical field name maps onto it unless that field is
// mapped explicitly. id, ra and dec are required.
//
// Out: a Table, one float64 slice per field present (nil when absent, NaN
// for a missing cell) plus IDs and source lines, and a Report with the
// SHA-256 of the raw file bytes (compressed bytes for .gz), row counts,
// the unused headers and every quarantined row with line, 1-based field
// index and reason. RowsRead == RowsKept + len(Quarantined) always.
//
// Units in a Table are canonical (see Fields): ra/dec in deg (ICRS, at the
// catalog epoch), positional errors and parallaxes in mas, proper motions in
// mas/yr (pm_ra is mu_alpha* = mu_alpha cos dec), rv in km/s, distance in
// kpc. Accepted file units: ra deg or hour; errors, parallax and excess
// noise mas, arcsec or deg; proper motions mas/yr or arcsec/yr; rv km/s or
// m/s; distance kpc, pc or mag (a distance modulus mu, converted with
// d = 10^(mu/5+1) pc; the modulus and its error are kept in DistMod and
// DistModErr and distance_err is then also in mag).
//
// Rows are quarantined (or, with ReadOptions.Strict, the first problem is
// a fatal *RowError) for: a value that is not a finite number, dec outside
// [-90, 90], ra outside [0, 360) after conversion, a negative uncertainty,
// a correlation outside [-1, 1], a repeated id (the later row), a missing
// id, ra or dec, a wrong field count, or malformed CSV quoting. Missing
// file, unreadable gzip, missing required or mapped columns and bad specs
// are fatal *FileError values. All wrap sentinels (ErrNotNumber, ...).
//
// Reading is a pipeline: one goroutine cuts the input into batches of
// records, ReadOptions.Workers goroutines (default GOMAXPROCS) convert the
// numbers, and the caller's goroutine checks ids and builds the table in
// file order. Lines without a double quote are split at their commas
// directly, and plain decimals are read by an exact fast path; from the
// first line with a quote on, encoding/csv reads the rest of the file, and
// any cell the fast path declines goes through strconv.ParseFloat and the
// general row checks. The result is the same as reading the whole file
// with encoding/csv, which the tests hold it to.
//
// PositionErrMas > 0 fills ra_err and dec_err where the column is absent or
// the cell missing (counted in Report.PositionErrFilled).
package catalog
