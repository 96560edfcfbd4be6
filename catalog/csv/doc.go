// Package csvcat reads catalogs in delimited text: values with a header
// line (RFC 4180 quoting), plain or gzip-compressed (.gz by suffix),
// separated by the catalog's delimiter: a comma (the default), a
// semicolon, a tab, or runs of spaces and tabs (" "), where a line's
// leading and trailing whitespace is ignored and a field may be quoted
// ("" for an empty one). A header of one name that holds another of these
// delimiters is an error suggesting the key. ReadText serves formats that
// put a header of their own before delimited rows (package ecsv). It
// knows only these formats; the units, range checks, quarantine and the
// table itself come from catalog.Builder (see package catalog), and every
// number it returns is in catalog's canonical units.
//
// The Report's SHA-256 covers the raw file bytes (the compressed bytes for
// .gz). Positions in errors and quarantined rows are 1-based lines and
// field indices; a quoted field may span lines, and a field's line is the
// line it starts on.
//
// Reading is a pipeline: one goroutine cuts the input into batches of
// records, ReadOptions.Workers goroutines (default GOMAXPROCS, through
// parallel.Workers) convert the numbers, and the caller's goroutine hands
// the batches to the Builder in file order. Lines without a double quote
// are split at their delimiter directly, and plain decimals are read by an
// exact fast path; from the first line with a quote on, encoding/csv reads
// the rest of the file, and any cell the fast path declines goes through
// catalog.Layout.ConvertRecord (strconv.ParseFloat and the general row
// checks). The result is the same as reading the whole file with
// encoding/csv (Comma set to the delimiter), which the tests hold it to;
// for whitespace, encoding/csv has no equivalent, and lines with a quote
// are split by the reader's own quote-aware splitter, the reference the
// tests hold its quote-free path to.
package csvcat
