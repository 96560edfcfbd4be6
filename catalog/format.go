package catalog

import (
	"errors"
	"fmt"
	"strings"
)

// The file formats starvet reads, by the name a campaign's `format` key
// uses.
const (
	FormatCSV     = "csv"     // delimited text (comma, semicolon, tab or whitespace), optionally gzipped
	FormatECSV    = "ecsv"    // enhanced CSV 1.0: a YAML header with datatypes and units
	FormatFITS    = "fits"    // FITS binary table (FITS Standard 4.0), optionally gzipped
	FormatVOTable = "votable" // IVOA VOTable 1.3-1.5
	FormatParquet = "parquet" // Apache Parquet
	FormatShard   = "shard"   // starvet's own shard of an ingested table (package catalog/shard)
)

// formatSuffixes maps file-name endings to formats; longer endings are
// tried first, so ".fits.gz" is FITS, not gzip of something unknown.
var formatSuffixes = []struct{ suffix, format string }{
	{".csv.gz", FormatCSV}, {".csv", FormatCSV}, {".tsv.gz", FormatCSV}, {".tsv", FormatCSV},
	{".ecsv.gz", FormatECSV}, {".ecsv", FormatECSV},
	{".fits.gz", FormatFITS}, {".fit.gz", FormatFITS}, {".fits", FormatFITS}, {".fit", FormatFITS},
	{".vot.gz", FormatVOTable}, {".vot", FormatVOTable}, {".votable", FormatVOTable}, {".xml", FormatVOTable},
	{".parquet", FormatParquet},
	{".shard", FormatShard},
}

// ErrFormat marks a file whose format starvet cannot tell or does not read.
var ErrFormat = errors.New("unknown file format")

// FormatOf is the format of file: explicit when given (a campaign's
// `format` key), else by the file name's ending.
func FormatOf(file, explicit string) (string, error) {
	if explicit != "" {
		for _, s := range formatSuffixes {
			if s.format == explicit {
				return explicit, nil
			}
		}
		return "", fmt.Errorf("%w %q (want one of %s)", ErrFormat, explicit, strings.Join(FormatNames(), ", "))
	}
	lower := strings.ToLower(file)
	for _, s := range formatSuffixes {
		if strings.HasSuffix(lower, s.suffix) {
			return s.format, nil
		}
	}
	return "", fmt.Errorf("%w: %q has none of the endings %s; name the format with the catalog's `format` key", ErrFormat, file, strings.Join(Suffixes(), " "))
}

// FormatNames lists the formats in a fixed order.
func FormatNames() []string {
	return []string{FormatCSV, FormatECSV, FormatFITS, FormatVOTable, FormatParquet, FormatShard}
}

// Suffixes lists the file-name endings that name a format.
func Suffixes() []string {
	out := make([]string, len(formatSuffixes))
	for i, s := range formatSuffixes {
		out[i] = s.suffix
	}
	return out
}
