// Package tomlpos finds where things are in a TOML text: the 1-based line
// and column of every table header, array-of-tables element and key. The
// TOML decoder reports positions only for syntax errors, and rule and
// campaign files must name the line and column of a bad value too.
//
// A path is a list of key segments (unquoted). The n-th (0-based) element
// of an array of tables is the segment Elem(name, n), written "name#n":
// "catalog#1", "columns", "ra" is the key ra in the [catalog.columns] table
// of the second [[catalog]]. Every path is also recorded without indices
// ("catalog", "columns", "ra"), first occurrence winning, for keys that the
// decoder reports without them (MetaData.Undecoded).
//
// The scanner follows TOML far enough to skip comments, multi-line strings,
// multi-line arrays and inline tables; keys inside inline tables are not
// recorded (Near falls back to the key holding the table). It expects text
// the decoder has accepted; on other text it records what it can and never
// fails.
//
// Units: lines and columns are 1-based; a column counts bytes from the
// start of the line (for the spaces and tabs before a key or header, the
// same as characters).
package tomlpos
