package catalog

import (
	"fmt"
	"strings"
)

// ColumnRow is one column of a file and what starvet makes of it.
type ColumnRow struct {
	Position int // 1-based, in file order
	ColumnMeta
	// Field is the canonical field the column feeds; "" when it feeds none.
	Field string
	// MappedBy says why: ByCampaign, ByUCD or ByName; "" when unmapped.
	MappedBy string
	// ReadUnit is the unit starvet reads the column in: a unit word of
	// the field ("hour", "m/s", ...) or its canonical unit; "" for a field
	// without a unit (id, correlations, counts, flags).
	ReadUnit string
	// UnitFrom is where ReadUnit comes from: "campaign" ([catalog.units]),
	// "file" (the column's own unit) or "canonical" (neither gives one).
	UnitFrom string
}

// Where a row's ReadUnit comes from, besides the Mapping's "campaign" and
// "file".
const UnitCanonical = "canonical"

// Describe resolves s against a file's columns as the readers do and
// returns one row per column, in file order, and the mappable fields no
// column feeds, in field order. The rows are returned even with an error,
// which names the file: a field two columns claim, a unit that cannot be
// converted, a column [catalog.columns] names but the file lacks, a mapped
// column whose name appears twice, or a required field (id, ra, dec) no
// column feeds.
func (s Spec) Describe(cols []ColumnMeta) ([]ColumnRow, []Field, error) {
	rows := make([]ColumnRow, len(cols))
	for i, c := range cols {
		rows[i] = ColumnRow{Position: i + 1, ColumnMeta: c}
	}
	units, err := s.units()
	if err != nil {
		return rows, nil, fileError(s.File, 0, 0, "", err.Error(), err)
	}
	m, err := s.Map(cols)
	if m == nil {
		return rows, nil, err
	}
	var missing []Field
	for f := Field(0); f < NumFields; f++ {
		if !Mappable(f) {
			continue
		}
		i := m.Column[f]
		if i < 0 {
			missing = append(missing, f)
			continue
		}
		r := &rows[i]
		r.Field, r.MappedBy = Fields[f].Name, m.MappedBy[f]
		r.ReadUnit, r.UnitFrom = m.Unit[f], m.UnitFrom[f]
		if r.ReadUnit == "" {
			r.ReadUnit = Fields[f].Unit
		}
		if r.UnitFrom == "" {
			r.UnitFrom = UnitCanonical
		}
		if units[f] != "" && r.UnitFrom != "campaign" {
			// distance in mag puts distance_err in mag too (Spec.units)
			r.ReadUnit, r.UnitFrom = units[f], "campaign"
		}
		if f == ID || Fields[f].Unit == "" {
			r.ReadUnit, r.UnitFrom = "", ""
		}
	}
	if err != nil {
		return rows, missing, err
	}
	return rows, missing, s.checkMapping(m, cols, missing)
}

// checkMapping finds what Map leaves to the reader: a named column absent
// from the file, a mapped name the file repeats, a required field unfed.
func (s Spec) checkMapping(m *Mapping, cols []ColumnMeta, missing []Field) error {
	names := make(map[string]int, len(cols))
	for _, c := range cols {
		names[c.Name]++
	}
	for f := Field(0); f < NumFields; f++ {
		h, ok := s.Columns[Fields[f].Name]
		if ok && names[h] == 0 {
			return fileError(s.File, 0, 0, h,
				fmt.Sprintf("%s: the file has no column %q ([catalog.columns] maps it to %s)", ErrMissingColumn, h, Fields[f].Name), ErrMissingColumn)
		}
		if i := m.Column[f]; i >= 0 && names[cols[i].Name] > 1 {
			return fileError(s.File, 0, i+1, cols[i].Name,
				fmt.Sprintf("%s: column %q (mapped to %s) appears %d times", ErrBadHeader, cols[i].Name, Fields[f].Name, names[cols[i].Name]), ErrBadHeader)
		}
	}
	var req []string
	for _, f := range missing {
		if f == ID || f == RA || f == Dec {
			req = append(req, Fields[f].Name)
		}
	}
	if len(req) > 0 {
		return fileError(s.File, 0, 0, "",
			fmt.Sprintf("%s: no column feeds required field(s) %s; name the column in [catalog.columns]", ErrMissingColumn, strings.Join(req, ", ")), ErrMissingColumn)
	}
	return nil
}
