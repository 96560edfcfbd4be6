// Package parquetcat reads catalogs in Apache Parquet. It knows only the
// file format; the mapping of columns to canonical fields (by the
// campaign, then UCD, then name), the units, range checks, quarantine and
// the table itself come from catalog.Builder, and every number it returns
// is in catalog's canonical units.
//
// # Columns
//
// The columns are the file's leaf columns in schema order, named by their
// path joined with "."; a leaf inside a group or a repeated column is listed
// but cannot feed a field. Datatype is the physical type, then "/" and the
// logical type when the file gives one ("DOUBLE", "INT32/INT(16,false)",
// "BYTE_ARRAY/STRING").
//
// Units and UCDs come from one key-value metadata entry, table_meta_yaml:
// the YAML header of an enhanced CSV (ECSV 1.0) table, as astronomy tools
// write it into Parquet files. Its datatype list is read, and of each entry
// only name, unit, and the UCD as ucd or meta.ucd; every other key is
// ignored. A column the entry does not describe, or a file without the
// entry, has unit "" (the canonical unit is assumed) and no UCD; a
// campaign's [catalog.units] overrides either. A table_meta_yaml that is
// not YAML is an error (ErrBadHeader), not a silent fallback.
//
// # Values
//
// Only the mapped columns are read. A numeric field takes BOOLEAN (1 or 0),
// INT32 and INT64 (signed, or unsigned by their logical or converted type),
// FLOAT or DOUBLE; the id takes BYTE_ARRAY as text, or INT32 or INT64 as
// decimal text. Any other type on a mapped column (decimals, dates and
// times, INT96, fixed-length byte arrays, text for a number) is an error
// naming the column before any row is read.
//
// A null (a definition level below the maximum) is a missing value. A NaN
// stored as a FLOAT or DOUBLE value is also treated as missing, as Parquet
// has no other way to say so for writers that do not use nulls; a missing
// ra or dec, or a null id, sets the row aside. An infinity is a bad value:
// its row is quarantined (ErrNotNumber).
//
// # Positions and errors
//
// Positions are 1-based rows of the whole file; a quarantined row's reason
// ends with its row group, "(row group G)", and the fields written for it
// to rejected.csv are all its columns as text ("" for null), read again for
// that row only. A file that cannot be opened as Parquet (a truncated file,
// a broken footer), a page that cannot be decoded, or a column chunk that
// holds fewer or more values than its row group says is an error
// (ErrUnreadable) naming the file, the row group, the row and the column;
// no table is returned with it, so a damaged file never reads as a shorter
// whole one. A panic inside the Parquet library on corrupt input is
// returned as such an error too.
//
// # Reading
//
// Row groups are decoded on ReadOptions.Workers goroutines (default
// GOMAXPROCS), each in batches of a few thousand rows, and handed to the
// Builder in file order; the context is checked between batches. The
// Report's SHA-256 covers the raw file bytes, hashed on a goroutine of its
// own while the rows are read. Compressions are those of
// github.com/parquet-go/parquet-go; the tests read snappy, zstd and gzip
// files written by DuckDB (the library also has lz4 and brotli codecs,
// which no test here reads).
package parquetcat
