// Package fitscat reads catalogs stored as FITS binary tables (FITS
// Standard 4.0; Pence et al. 2010, A&A 524, A42), plain or gzip-compressed
// as a whole file (.gz by name, or the gzip magic bytes). It is written
// from the standard with the Go standard library only.
//
// In: a catalog.Spec. Spec.HDU picks the table: "" the first BINTABLE
// extension, a number the extension with that number (1 = the first
// extension after the primary HDU), anything else the extension with that
// EXTNAME (compared without regard to case). An ASCII TABLE extension is
// an error saying it is not supported.
//
// Columns: TTYPEn is the name, TFORMn the datatype, TUNITn the unit and
// TUCDn, when present, the UCD; catalog.Spec.Map maps them by the
// campaign, then UCD, then name, and catalog converts the file's units
// (deg, mas, mas/yr, km/s, kpc, ...) into the canonical ones. A numeric
// field takes a column of one B, I, J, K, E or D value a row; physical
// value = TZEROn + TSCALn x stored value, with the unsigned-integer offsets
// of section 7.3.2 done in unsigned 64-bit arithmetic; a stored integer
// equal to TNULLn (compared before scaling) or a floating-point NaN is
// null. The id takes a character column (A, up to the first NUL, trailing
// blanks dropped) or one integer a row, written in decimal; an empty id or
// one of the campaign's null markers is missing. Columns no field reads
// may be of any type, heap descriptors (P, Q) included: the heap is never
// read. TDISPn is ignored.
//
// Out: a catalog.Table in canonical units and a catalog.Report whose
// SHA-256 covers the raw file bytes (the compressed bytes for .gz) and
// whose positions are 1-based table rows (Table.Lines holds each kept
// row's number). A header without END, data shorter than NAXIS1 x NAXIS2,
// or a bad TFORM is an error naming the file and the HDU (and the column),
// never a partial table.
//
// Reading streams: one goroutine reads chunks of about 2 MiB of whole rows,
// workers decode only the mapped cells (big-endian, encoding/binary) and
// convert them through catalog.Layout.ConvertValues, and the caller's
// goroutine hands the chunks to catalog.Builder in file order. Memory is
// the table kept plus a few chunks.
//
// WriteTable writes a catalog.OutTable as a primary HDU without data and
// one BINTABLE (D, K with TNULLn, NUL-padded nA; TUNITn, TUCDn, EXTNAME),
// streamed, gzipped for a name ending in .gz.
package fitscat
