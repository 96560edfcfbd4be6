package catalog

import (
	"errors"
	"fmt"
	"strings"
)

// ColumnMeta is one column of a file as the file itself describes it. A
// delimited text file gives only the name; FITS, VOTable, ECSV and Parquet
// files give a datatype and often a unit and an IVOA UCD.
type ColumnMeta struct {
	Name     string
	Datatype string // the file's own word for the type ("E", "double", "float64", ...)
	Unit     string // as the file spells it; "" when it gives none
	UCD      string // IVOA Unified Content Descriptor; "" when none
}

// Why a column feeds a field (MappedBy values).
const (
	ByCampaign = "campaign" // [catalog.columns] names the column
	ByUCD      = "ucd"      // the column's UCD names the quantity
	ByName     = "name"     // the column is named like the field
)

// ErrMappedTwice marks a field that two columns claim by their metadata.
var ErrMappedTwice = errors.New("field mapped two ways")

// fieldUCDs gives, per field, the UCD words that name it (IVOA UCD1+
// controlled vocabulary, version 1.5, 2023: pos.eq.ra, pos.parallax.trig,
// pos.pm, spect.dopplerVeloc, stat.error, ...). A column matches when its
// UCD, split on ';' and without the qualifier meta.main, is exactly one of
// the word lists: never a substring match. stat.error first marks the error
// of the quantity that follows.
var fieldUCDs = map[Field][][]string{
	ID:          {{"meta.id"}},
	RA:          {{"pos.eq.ra"}},
	Dec:         {{"pos.eq.dec"}},
	RAErr:       {{"stat.error", "pos.eq.ra"}},
	DecErr:      {{"stat.error", "pos.eq.dec"}},
	Parallax:    {{"pos.parallax.trig"}, {"pos.parallax"}},
	ParallaxErr: {{"stat.error", "pos.parallax.trig"}, {"stat.error", "pos.parallax"}},
	PMRA:        {{"pos.pm", "pos.eq.ra"}},
	PMRAErr:     {{"stat.error", "pos.pm", "pos.eq.ra"}},
	PMDec:       {{"pos.pm", "pos.eq.dec"}},
	PMDecErr:    {{"stat.error", "pos.pm", "pos.eq.dec"}},
	RV:          {{"spect.dopplerVeloc"}, {"spect.dopplerVeloc.opt"}},
	RVErr:       {{"stat.error", "spect.dopplerVeloc"}, {"stat.error", "spect.dopplerVeloc.opt"}},
	Distance:    {{"pos.distance"}},
	DistanceErr: {{"stat.error", "pos.distance"}},
	SNR:         {{"stat.snr"}},
}

// FieldByUCD returns the field a UCD names, if any.
func FieldByUCD(ucd string) (Field, bool) {
	var words []string
	for _, w := range strings.Split(ucd, ";") {
		if w = strings.TrimSpace(w); w != "" && w != "meta.main" {
			words = append(words, w)
		}
	}
	if len(words) == 0 {
		return 0, false
	}
	for f, lists := range fieldUCDs {
		for _, l := range lists {
			if equalWords(words, l) {
				return f, true
			}
		}
	}
	return 0, false
}

func equalWords(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if !strings.EqualFold(a[i], b[i]) {
			return false
		}
	}
	return true
}

// unitSpellings maps the unit strings files write (IVOA VOUnits 1.0, 2014,
// and the FITS Standard 4.0, section 4.3) onto the unit words of
// unitChoices. A file's unit string is looked up after trimming spaces.
var unitSpellings = map[string]string{
	"deg": "deg", "degree": "deg", "degrees": "deg",
	"h": "hour", "hour": "hour", "hourangle": "hour",
	"mas": "mas", "arcsec": "arcsec", "uarcsec": "uarcsec", "uas": "uarcsec",
	"mas/yr": "mas/yr", "mas.yr**-1": "mas/yr", "mas yr-1": "mas/yr", "mas.yr-1": "mas/yr", "mas/a": "mas/yr", "mas.a**-1": "mas/yr",
	"arcsec/yr": "arcsec/yr", "arcsec.yr**-1": "arcsec/yr", "arcsec yr-1": "arcsec/yr",
	"km/s": "km/s", "km.s**-1": "km/s", "km s-1": "km/s", "km.s-1": "km/s",
	"m/s": "m/s", "m.s**-1": "m/s", "m s-1": "m/s", "m.s-1": "m/s",
	"pc": "pc", "kpc": "kpc", "mag": "mag",
	// The spaced quotients some writers produce (e.g. "mas / yr").
	"mas / yr": "mas/yr", "arcsec / yr": "arcsec/yr", "km / s": "km/s", "m / s": "m/s",
}

// dimensionless lists the spellings that mean "no unit" for a
// dimensionless field.
var dimensionless = map[string]bool{"": true, "-": true, "1": true}

// FileUnit turns the unit a file writes for a column feeding f into one of
// f's accepted unit words ("" = canonical), or says why it cannot.
func FileUnit(f Field, fileUnit string) (string, error) {
	u := strings.TrimSpace(fileUnit)
	if u == "" {
		return "", nil
	}
	if Fields[f].Unit == "" || f == ID {
		if dimensionless[u] {
			return "", nil
		}
		return "", fmt.Errorf("%w %q for %s, which has no unit", ErrBadUnit, fileUnit, Fields[f].Name)
	}
	word, ok := unitSpellings[u]
	if !ok {
		word, ok = unitSpellings[strings.ToLower(u)]
	}
	if !ok {
		return "", fmt.Errorf("%w %q for %s (accepted: %q)", ErrBadUnit, fileUnit, Fields[f].Name, unitChoices(f))
	}
	if err := CheckUnit(f, word); err != nil {
		return "", err
	}
	if word == Fields[f].Unit {
		return "", nil
	}
	return word, nil
}

// Mapping is a Spec resolved against a file's columns: for every
// canonical field the column that feeds it, why, and its unit.
type Mapping struct {
	Column   [NumFields]int    // 0-based column index, -1 when none
	MappedBy [NumFields]string // ByCampaign, ByUCD or ByName
	Unit     [NumFields]string // accepted unit word, "" = canonical
	UnitFrom [NumFields]string // "campaign", "file" or "" (canonical assumed)
}

// Map resolves spec against cols. A field named in spec.Columns takes that
// column; otherwise a column whose UCD names the field, then a column named
// like the field. Units: spec.Units first, then the file's unit. Two
// columns claiming one field by UCD, a field claimed by UCD and by name
// from different columns, or a file unit that cannot be converted are
// errors naming the file, the columns and both candidates.
func (s Spec) Map(cols []ColumnMeta) (*Mapping, error) {
	m := &Mapping{}
	index := make(map[string]int, len(cols))
	for i, c := range cols {
		if _, dup := index[c.Name]; !dup {
			index[c.Name] = i
		}
	}
	explicit := make(map[string]bool, len(s.Columns))
	for _, h := range s.Columns {
		explicit[h] = true
	}
	for f := Field(0); f < NumFields; f++ {
		m.Column[f] = -1
		if !Mappable(f) {
			continue
		}
		if h, ok := s.Columns[Fields[f].Name]; ok {
			if i, ok := index[h]; ok {
				m.Column[f], m.MappedBy[f] = i, ByCampaign
			}
			continue // a named column absent from the file: the caller says so
		}
		byUCD := -1
		for i, c := range cols {
			if g, ok := FieldByUCD(c.UCD); ok && g == f && !explicit[c.Name] {
				if byUCD >= 0 {
					return nil, s.twice(f, cols[byUCD], c, "both have its UCD")
				}
				byUCD = i
			}
		}
		byName, ok := index[Fields[f].Name]
		if !ok || explicit[Fields[f].Name] {
			byName = -1 // absent, or taken by the campaign for another field
		} else if g, other := FieldByUCD(cols[byName].UCD); other && g != f {
			byName = -1 // named like f, but its UCD says it is another quantity
		}
		switch {
		case byUCD >= 0 && byName >= 0 && byUCD != byName:
			return nil, s.twice(f, cols[byUCD], cols[byName], "one by its UCD, one by its name")
		case byUCD >= 0:
			m.Column[f], m.MappedBy[f] = byUCD, ByUCD
		case byName >= 0:
			m.Column[f], m.MappedBy[f] = byName, ByName
		}
	}
	return m, s.fillUnits(m, cols)
}

func (s Spec) twice(f Field, a, b ColumnMeta, how string) error {
	return fileError(s.File, 0, 0, Fields[f].Name,
		fmt.Sprintf("%s: columns %q and %q both map to %s (%s); say which in [catalog.columns]", ErrMappedTwice, a.Name, b.Name, Fields[f].Name, how),
		ErrMappedTwice)
}

// fillUnits fills the mapping's units: the campaign's where it names one,
// else the file's.
func (s Spec) fillUnits(m *Mapping, cols []ColumnMeta) error {
	campaign, err := s.units() // validated, with distance_err in mag when distance is
	if err != nil {
		return fileError(s.File, 0, 0, "", err.Error(), err)
	}
	for f := Field(0); f < NumFields; f++ {
		i := m.Column[f]
		if i < 0 {
			continue
		}
		if u := campaign[f]; u != "" {
			m.Unit[f], m.UnitFrom[f] = u, "campaign"
			continue
		}
		u, err := FileUnit(f, cols[i].Unit)
		if err != nil {
			return fileError(s.File, 0, 0, cols[i].Name,
				fmt.Sprintf("column %q (mapped to %s): %v; give the unit in [catalog.units] if the file's is wrong", cols[i].Name, Fields[f].Name, err), ErrBadUnit)
		}
		if cols[i].Unit != "" {
			m.Unit[f], m.UnitFrom[f] = u, "file"
		}
	}
	return nil
}

// FieldUCD is the UCD a writer gives a column holding field f: its first
// word list joined by ';' ("stat.error;pos.eq.ra"), "" when none.
func FieldUCD(f Field) string {
	if lists := fieldUCDs[f]; len(lists) > 0 {
		return strings.Join(lists[0], ";")
	}
	return ""
}
