// Package ecsv reads catalogs in the Enhanced Character Separated Values
// format, version 1.0 (Aldcroft et al., ECSV specification, astropy APE 6):
// a header of lines starting with "# " holding a YAML document that lists
// every column's name, datatype and unit, then a column-name line and
// delimited rows, separated by single spaces (the default; runs of
// whitespace are read as one) or commas. Plain or gzip-compressed (.gz by
// suffix).
//
// The header is parsed here; the rows go through the CSV reader's splitter
// and converters (csvcat.ReadText), so they are read as fast as a CSV
// file's and their problems are quarantined the same way. Columns map with
// catalog.NewBuilderFromMeta: by the campaign, then by a UCD the column's
// meta gives ("ucd" key), then by name, in the campaign's unit or else the
// unit the header gives. Line numbers count the header's lines: a row's
// line is its line in the file.
//
// The header's delimiter is the file's: a campaign's delimiter key is not
// used. Units: astropy writes quotients as "mas / yr"; the slash is closed
// up for catalog.FileUnit.
//
// Missing values: an empty field (how ECSV writes a masked value; "" in a
// space-delimited file) and the text null are missing, besides the
// campaign's null markers.
package ecsv
