// Package shard writes and reads shards: compact binary files that each
// hold a subset of the rows of one already-ingested catalog.Table, so that
// a campaign split into sky tiles can give every tile run its own rows of
// every catalog. A tile run reads its shards through catalog/ingest like
// any other catalog file (format "shard", file ending ".shard").
//
// # What a shard holds
//
// The table's Name, Release, Role and EpochJyr (Julian years), then for
// each row its id and its Lines entry (the 1-based line or row of the
// original source file, kept as written), then every column the table has
// (every non-nil Cols entry, canonical fields only). Every number is in
// catalog's canonical units, exactly as the original ingest produced it:
// ra and dec in deg (ICRS, at the catalog epoch), positional errors,
// parallaxes and excess noise in mas, proper motions in mas/yr (pm_ra is
// mu_alpha* = mu_alpha cos dec), rv in km/s, distance in kpc, distance
// modulus, magnitudes and colours in mag, the rest dimensionless. Values
// are stored as the IEEE-754 bits of the float64, so NaN (a missing cell),
// infinities, -0 and subnormal numbers read back bit for bit.
//
// # Layout
//
// All integers are little-endian. A fixed 24-byte header: the magic
// "SVSHARD\x1a", a uint32 format version (Version), the CRC-32C
// (Castagnoli) of the payload as uint32, and the payload's length in bytes
// as uint64. The payload: the row count and column count (uvarints); Name,
// Release and Role (each a uvarint length and UTF-8 bytes); EpochJyr (8
// bytes); the canonical name of each column (length-prefixed); every id
// (length-prefixed); every line (uvarint); then each column in turn, 8
// bytes a value. Nothing follows the payload.
//
// # Reading
//
// A shard's values are canonical already, so a catalog spec that reads a
// shard may map no columns and name no units other than the canonical
// ones; one that does is refused. Spec.PositionErrMas is not applied
// again: ra_err and dec_err were filled, where the campaign asked, by the
// original ingest and are stored as such. The values are not range-checked
// again either; the checksum guards them instead. A wrong magic, a newer
// version, a file shorter or longer than its header says, a malformed
// payload or a checksum mismatch is an error (wrapping
// catalog.ErrUnreadable) naming the file and, where known, the byte offset
// and column; no table is returned with it. Columns reads only the header
// and the column names and does not verify the checksum.
package shard
