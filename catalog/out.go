package catalog

import (
	"bufio"
	"compress/gzip"
	"encoding/csv"
	"errors"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

	"starvet/internal/numfmt"
)

// OutTable is a result table as the writers take it, whatever the output
// format: named columns of equal length, each with a unit (the spelling
// of Fields and VOUnits: "km/s", "mas/yr", "kpc"; "" when dimensionless),
// a UCD and a description, any of which may be "".
type OutTable struct {
	Name    string
	Columns []OutColumn
}

// OutColumn holds exactly one non-nil slice, which sets its type (a column
// of no rows holds an empty, non-nil slice). Null cells: NaN in Float,
// OutNullInt in Int, "" in Text.
type OutColumn struct {
	Name, Unit, UCD, Description string
	Float                        []float64
	Int                          []int64
	Text                         []string
}

// OutNullInt marks a null cell of an Int column. FITS writes it as the
// column's TNULLn.
const OutNullInt = math.MinInt64

// Kinds of OutColumn.
const (
	OutFloat = "float"
	OutInt   = "int"
	OutText  = "text"
)

// Kind is OutFloat, OutInt or OutText, or "" when not exactly one slice
// is set.
func (c *OutColumn) Kind() string {
	var k string
	n := 0
	if c.Float != nil {
		k, n = OutFloat, n+1
	}
	if c.Int != nil {
		k, n = OutInt, n+1
	}
	if c.Text != nil {
		k, n = OutText, n+1
	}
	if n != 1 {
		return ""
	}
	return k
}

// Len is the number of rows of the column.
func (c *OutColumn) Len() int { return max(len(c.Float), len(c.Int), len(c.Text)) }

// Len is the number of rows; 0 for a table of no columns.
func (t *OutTable) Len() int {
	if len(t.Columns) == 0 {
		return 0
	}
	return t.Columns[0].Len()
}

// Check says what makes t unwritable: a column without a name or one
// named twice, a column with no slice or two, columns of unequal length.
func (t *OutTable) Check() error {
	seen := make(map[string]bool, len(t.Columns))
	for i := range t.Columns {
		c := &t.Columns[i]
		switch {
		case c.Name == "":
			return fmt.Errorf("column %d has no name", i+1)
		case seen[c.Name]:
			return fmt.Errorf("column %q appears twice", c.Name)
		case c.Kind() == "":
			return fmt.Errorf("column %q: exactly one of Float, Int, Text must be set", c.Name)
		case c.Len() != t.Len():
			return fmt.Errorf("column %q has %d rows, column %q %d", c.Name, c.Len(), t.Columns[0].Name, t.Len())
		}
		seen[c.Name] = true
	}
	return nil
}

// FieldColumn is an OutColumn for canonical field f with its canonical
// unit, UCD and description; the caller sets one slice.
func FieldColumn(f Field) OutColumn {
	u := Fields[f].Unit
	if u == "text" {
		u = ""
	}
	return OutColumn{Name: Fields[f].Name, Unit: u, UCD: FieldUCD(f), Description: Fields[f].Doc}
}

// Output formats: FormatCSV, FormatECSV, FormatFITS, FormatVOTable.
var outSuffixes = []struct{ suffix, format string }{
	{".csv.gz", FormatCSV}, {".csv", FormatCSV},
	{".ecsv.gz", FormatECSV}, {".ecsv", FormatECSV},
	{".fits.gz", FormatFITS}, {".fit.gz", FormatFITS}, {".fits", FormatFITS}, {".fit", FormatFITS},
	{".vot", FormatVOTable}, {".votable", FormatVOTable}, {".xml", FormatVOTable},
}

// OutFormat is the format starvet writes file in, by its ending (case
// ignored); a name ending in .gz is gzip-compressed as a whole.
func OutFormat(file string) (string, error) {
	lower := strings.ToLower(file)
	for _, s := range outSuffixes {
		if strings.HasSuffix(lower, s.suffix) {
			return s.format, nil
		}
	}
	ends := make([]string, len(outSuffixes))
	for i, s := range outSuffixes {
		ends[i] = s.suffix
	}
	return "", fmt.Errorf("%w: cannot tell the output format of %q: give it one of the endings %s", ErrFormat, file, strings.Join(ends, " "))
}

// outFITSUnits spells units the FITS way (FITS Standard 4.0, section 4.3:
// a space multiplies, a signed integer after a unit is its power); units
// not listed are written as they are.
var outFITSUnits = map[string]string{
	"km/s": "km s-1", "m/s": "m s-1", "mas/yr": "mas yr-1", "arcsec/yr": "arcsec yr-1",
}

// OutUnitFITS is unit as TUNITn writes it.
func OutUnitFITS(unit string) string {
	if u, ok := outFITSUnits[unit]; ok {
		return u
	}
	return unit
}

// OutFile is an output file being written through a buffer, gzipped when
// its name ends in .gz. Close flushes and closes it; Abort removes it.
type OutFile struct {
	*bufio.Writer
	Path string
	f    *os.File
	zw   *gzip.Writer
}

// OutCreate creates path for writing.
func OutCreate(path string) (*OutFile, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, err // *PathError names the file
	}
	o := &OutFile{Path: path, f: f}
	if strings.HasSuffix(strings.ToLower(path), ".gz") {
		o.zw = gzip.NewWriter(f)
		o.Writer = bufio.NewWriterSize(o.zw, 1<<20)
	} else {
		o.Writer = bufio.NewWriterSize(f, 1<<20)
	}
	return o, nil
}

// Close flushes the buffer and the gzip stream and closes the file; an
// error names the file, and the partial file is removed.
func (o *OutFile) Close() error {
	err := o.Flush()
	if o.zw != nil {
		err = errors.Join(err, o.zw.Close())
	}
	if err = errors.Join(err, o.f.Close()); err != nil {
		os.Remove(o.Path)
		return fmt.Errorf("%s: %w", o.Path, err)
	}
	return nil
}

// Abort closes and removes the file, after an error elsewhere.
func (o *OutFile) Abort() {
	o.f.Close()
	os.Remove(o.Path)
}

// WriteOutCSV writes t as CSV with a header line of the column names,
// units dropped: floats in the shortest text that reads back exactly,
// nulls as empty fields.
func WriteOutCSV(path string, t *OutTable) error {
	if err := t.Check(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	o, err := OutCreate(path)
	if err != nil {
		return err
	}
	w := csv.NewWriter(o)
	rec := make([]string, len(t.Columns))
	for j := range t.Columns {
		rec[j] = t.Columns[j].Name
	}
	w.Write(rec)
	for i := range t.Len() {
		for j := range t.Columns {
			rec[j] = t.Columns[j].OutText(i)
		}
		w.Write(rec)
	}
	w.Flush()
	if err := w.Error(); err != nil {
		o.Abort()
		return fmt.Errorf("%s: %w", path, err)
	}
	return o.Close()
}

// OutText is cell i as text: floats in the shortest form that reads back
// exactly, integers in decimal, and "" for null.
func (c *OutColumn) OutText(i int) string {
	switch {
	case c.Float != nil:
		return numfmt.CSV(c.Float[i])
	case c.Int != nil:
		if c.Int[i] == OutNullInt {
			return ""
		}
		return strconv.FormatInt(c.Int[i], 10)
	}
	return c.Text[i]
}
