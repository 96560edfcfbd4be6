package catalog

import (
	"fmt"
	"math"
	"sort"
)

// Spec says where a catalog is and how to read it.
type Spec struct {
	Name string
	File string // path to the catalog file; its suffix names the format unless Format does
	// Format is the file's format (FormatCSV, ...); "" tells it by the file
	// name's ending (FormatOf).
	Format string
	// HDU selects a FITS extension by number (1 = the first extension) or
	// EXTNAME; "" is the first binary table.
	HDU string
	// Table selects a VOTable TABLE by its name or ID, or by number (1 =
	// the first); "" is the first table.
	Table string
	// Delimiter separates the fields of delimited text: "" or "," (comma),
	// ";", "\t" (tab) or " " (runs of whitespace).
	Delimiter string
	Role      Role
	EpochJyr  float64 // Julian year of the positions
	Release   string
	// Columns maps a canonical field name to a file header. A header equal
	// to a canonical name maps onto that field unless the field is mapped
	// explicitly.
	Columns map[string]string
	// Units maps a canonical field name to the unit used by the file, where
	// it differs from the canonical one (see CheckUnit).
	Units map[string]string
	// NullMarkers are cell texts meaning "missing"; nil means
	// DefaultNullMarkers. An empty cell is always missing.
	NullMarkers []string
	// PositionErrMas, when > 0, is used for ra_err and dec_err where the
	// file has no such column or the cell is missing.
	PositionErrMas float64
}

// ReadOptions tune a reader.
type ReadOptions struct {
	// Strict turns the first row problem into a fatal error instead of
	// quarantining the row.
	Strict bool
	// Workers is how many goroutines convert numbers, besides the reader's
	// own and the caller's, which builds the table; 0 means
	// runtime.GOMAXPROCS(0).
	Workers int
}

// Quarantine is a row set aside, with the reason.
type Quarantine struct {
	Line       int // 1-based line of a text file; 0 for a binary table
	Row        int // 1-based row of a binary table; 0 for a text file
	Column     int // 1-based field index; 0 for the row as a whole
	ColumnName string
	Value      string
	Reason     string
	Record     []string // the raw row
	Err        error    // sentinel, for errors.Is
}

// Report describes one ingest.
type Report struct {
	File     string
	SHA256   string // hex SHA-256 of the raw file bytes (compressed bytes for .gz)
	Header   []string
	RowsRead int // data rows seen; RowsRead == RowsKept + len(Quarantined)
	RowsKept int
	// Quarantined rows, in file order.
	Quarantined []Quarantine
	// Mapped gives, per canonical field name, the header it was read from.
	Mapped map[string]string
	// MappedBy gives, per canonical field name, why its column was chosen
	// (ByCampaign, ByUCD, ByName) for a file that describes its columns;
	// nil for delimited text.
	MappedBy map[string]string
	// Unused lists headers that fed no field, so nothing is dropped unseen.
	Unused []string
	// PositionErrFilled counts ra_err/dec_err cells filled from
	// Spec.PositionErrMas.
	PositionErrFilled int
	// Warnings are what the file says about itself that a user must hear
	// but that does not stop the read, e.g. a service's note that it cut
	// the result short. Callers print them loudly.
	Warnings []string
}

// DefaultNullMarkers returns the cell texts that mean "missing" when a
// campaign names none.
func DefaultNullMarkers() []string { return []string{"", "NaN", "null"} }

// Check validates the field names and units of the spec, before any file
// is opened. Its error is a *position.Error naming the file.
func (s Spec) Check() error {
	if _, err := s.units(); err != nil {
		return fileError(s.File, 0, 0, "", err.Error(), err)
	}
	return nil
}

// units validates the field names and units of a spec and returns the unit
// of every field ("" = canonical).
func (s Spec) units() ([NumFields]string, error) {
	var units [NumFields]string
	for name := range s.Columns {
		f, ok := FieldByName(name)
		if !ok || !Mappable(f) {
			return units, fmt.Errorf("%w: columns: unknown field %q", ErrBadSpec, name)
		}
	}
	for name, u := range s.Units {
		f, ok := FieldByName(name)
		if !ok || !Mappable(f) {
			return units, fmt.Errorf("%w: units: unknown field %q", ErrBadSpec, name)
		}
		if err := CheckUnit(f, u); err != nil {
			return units, fmt.Errorf("%w: units: %w", ErrBadSpec, err)
		}
		units[f] = u
	}
	dm, em := units[Distance] == "mag", units[DistanceErr] == "mag"
	if em && !dm {
		return units, fmt.Errorf("%w: units: distance_err in mag requires distance in mag", ErrBadSpec)
	}
	if dm && units[DistanceErr] != "" && !em {
		return units, fmt.Errorf("%w: units: distance in mag requires distance_err in mag too", ErrBadSpec)
	}
	if dm {
		units[DistanceErr] = "mag"
	}
	if s.PositionErrMas < 0 || math.IsNaN(s.PositionErrMas) {
		return units, fmt.Errorf("%w: position_err_mas must be >= 0", ErrBadSpec)
	}
	return units, nil
}

// Column is one file column that feeds a canonical number.
type Column struct {
	Index  int // 0-based position in the header
	Field  Field
	Factor float64 // multiplies a file value into the canonical unit of Field
}

// plan resolves the header against the spec: the numeric columns in header
// order, the id column, and what was and was not used. Its errors carry
// headerLine (0 for a file without lines).
func (s Spec) plan(header []string, units [NumFields]string, headerLine int) (cols []Column, idIdx int, mapped map[string]string, unused []string, err error) {
	index := make(map[string]int, len(header))
	dupHeader := make(map[string]bool)
	for i, h := range header {
		if _, ok := index[h]; ok {
			dupHeader[h] = true
			continue
		}
		index[h] = i
	}
	used := make([]bool, len(header))
	mapped = make(map[string]string)
	idIdx = -1
	for f := Field(0); f < NumFields; f++ {
		if !Mappable(f) {
			continue
		}
		name := Fields[f].Name
		h, explicit := s.Columns[name]
		if !explicit {
			h = name
		}
		i, ok := index[h]
		if !ok {
			if explicit {
				return nil, 0, nil, nil, fileError(s.File, headerLine, 0, h,
					fmt.Sprintf("%s: header has no column %q (mapped to %s)", ErrMissingColumn, h, name), ErrMissingColumn)
			}
			continue
		}
		if !explicit && mappedElsewhere(s.Columns, h) {
			continue // the header feeds another field on purpose
		}
		if dupHeader[h] {
			return nil, 0, nil, nil, fileError(s.File, headerLine, i+1, h,
				fmt.Sprintf("%s: column %q appears more than once", ErrBadHeader, h), ErrBadHeader)
		}
		used[i] = true
		mapped[name] = h
		if f == ID {
			idIdx = i
			continue
		}
		cols = append(cols, Column{Index: i, Field: f, Factor: unitFactor(f, units[f])})
	}
	for _, f := range []Field{ID, RA, Dec} {
		if _, ok := mapped[Fields[f].Name]; !ok {
			return nil, 0, nil, nil, fileError(s.File, headerLine, 0, "",
				fmt.Sprintf("%s: header has no column for required field %s", ErrMissingColumn, Fields[f].Name), ErrMissingColumn)
		}
	}
	sort.Slice(cols, func(a, b int) bool { return cols[a].Index < cols[b].Index })
	for i, h := range header {
		if !used[i] {
			unused = append(unused, h)
		}
	}
	return cols, idIdx, mapped, unused, nil
}

func mappedElsewhere(cols map[string]string, header string) bool {
	for _, h := range cols {
		if h == header {
			return true
		}
	}
	return false
}
