// Package votable reads catalogs in the IVOA VOTable format, versions 1.3
// to 1.5 (Ochsenbein et al., IVOA Recommendation), plain or gzipped (.gz
// by suffix), into catalog.Table through catalog.Builder.
//
// In: a catalog.Spec. Spec.Table picks the TABLE ("" = the first in
// document order, a number counting from 1, or a TABLE's name or ID).
// Columns are the TABLE's FIELDs: name (ID when it has none), datatype,
// arraysize, unit, ucd and VALUES null. They map onto canonical fields by
// the campaign, then UCD, then name (catalog.Spec.Map), and a FIELD's
// unit is read as a VOUnit string (catalog.FileUnit), so numbers come out
// in catalog's canonical units: ra/dec deg, parallax and errors mas,
// proper motions mas/yr, rv km/s, distance kpc. A mapped numeric column
// must be a scalar boolean, bit, unsignedByte, short, int, long, float or
// double; the id a char or unicodeChar string or a scalar integer.
//
// Data: TABLEDATA (TD text read with strconv), BINARY and BINARY2 with
// an inline base64 STREAM. Null is an empty TD, a NaN float, an integer
// equal to its VALUES null, a '?' boolean, or a set BINARY2 null bit;
// Spec.NullMarkers, which are for text files, do not apply. A FITS
// serialisation or a remote STREAM (href) is an error saying so.
//
// Out: the Table and Report as catalog/csv gives them: Report.SHA256 is
// the hex SHA-256 of the raw file bytes (compressed bytes for .gz);
// positions are 1-based rows of the table (Quarantine.Row, Table.Lines).
// RowsRead == RowsKept + len(Quarantined). ReadTable also returns Info:
// the table's name, its serialisation, the COOSYS epoch (of the COOSYS the
// ra FIELD refers to, else the document's only one) and the QUERY_STATUS.
// Table.EpochJyr takes the COOSYS epoch when the Spec gives none.
//
// Errors are *position.Error values naming the file, the table, the row
// and the column: malformed XML, a document that ends early or a binary
// stream that ends inside a row, or rows fewer or more than TABLE nrows,
// are errors, never a shorter table. A QUERY_STATUS of OVERFLOW returns
// the table read, with a warning in the report naming ErrOverflow.
//
// Section numbers of the standard cited in comments are from memory of
// VOTable 1.3 and have not been checked against its text.
//
// The reader streams: encoding/xml's token reader walks the document,
// and a binary STREAM's base64 text is decoded from the same buffered
// reader into a bounded buffer, rows at a time, on a goroutine of its own
// while the caller's builds the table; another hashes the file.
package votable
