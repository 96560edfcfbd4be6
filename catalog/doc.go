// Package catalog defines starvet's canonical catalog fields and builds
// columnar tables from catalog files, whatever their format. The readers
// live in subpackages (catalog/csv for delimited text); package
// catalog/ingest picks one by file name.
//
// In: a Spec (file path; a map from canonical field name to file header;
// the units the file uses where they differ from the canonical ones; null
// markers; a fallback positional error). A header that equals a canonical
// field name maps onto it unless that field is mapped explicitly. id, ra
// and dec are required.
//
// Out: a Table, one float64 slice per field present (nil when absent, NaN
// for a missing cell) plus IDs and source lines, and a Report with the
// SHA-256 of the raw file bytes, row counts, the unused headers and every
// quarantined row with line, 1-based field index and reason.
// RowsRead == RowsKept + len(Quarantined) always.
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
// A reader does only what its format needs: it opens and hashes the file,
// reads the column names and the cells. The rest is here, the same for
// every format. NewBuilder checks the Spec and resolves it against the
// header into a Layout (column, field, unit factor; null markers). The
// Layout converts a row's cells to canonical units and checks their ranges
// (ConvertRecord; a reader with a faster path of its own uses the Layout's
// Columns, IsNullBytes and CheckRange the same way), into a Batch, which
// several goroutines may fill at once. The Builder takes batches in file
// order, finds repeated ids, quarantines rows with the reason, appends the
// kept rows to the Table and keeps the Report; Finish fills ra_err and
// dec_err from Spec.PositionErrMas (counted in Report.PositionErrFilled).
// A reader that needs no batches feeds the Builder one record at a time
// (AddRecord). A reader for another format (binary tables, say) is one more
// subpackage on this Builder, plus one case in catalog/ingest.
//
// Rows are quarantined (or, with ReadOptions.Strict, the first problem is
// a fatal error) for: a value that is not a finite number, dec outside
// [-90, 90], ra outside [0, 360) after conversion, a negative uncertainty,
// a correlation outside [-1, 1], a repeated id (the later row), a missing
// id, ra or dec, a wrong field count, or a record the reader cannot split
// (ErrMalformed). A missing file, an unreadable file, missing required or
// mapped columns and bad specs are fatal. Every error is a *position.Error
// ("file:line:col: column "NAME" value "V": reason" for a cell,
// "file:line: reason" for a whole row) wrapping a sentinel (ErrNotNumber,
// ...).
package catalog
