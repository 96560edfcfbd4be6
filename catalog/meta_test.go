package catalog

import (
	"errors"
	"math"
	"testing"
)

// UCDs from the IVOA UCD1+ controlled vocabulary (version 1.5): words
// joined by ';', meta.main a qualifier, stat.error first for an error.
func TestFieldByUCD(t *testing.T) {
	for ucd, want := range map[string]Field{
		"pos.eq.ra;meta.main":                   RA,
		"pos.eq.dec;meta.main":                  Dec,
		"meta.id;meta.main":                     ID,
		"pos.parallax.trig":                     Parallax,
		"stat.error;pos.parallax.trig":          ParallaxErr,
		"pos.pm;pos.eq.ra":                      PMRA,
		"stat.error;pos.pm;pos.eq.dec":          PMDecErr,
		"spect.dopplerVeloc.opt;em.opt.I":       -1, // a band qualifier we do not read: no guess
		"spect.dopplerVeloc":                    RV,
		"stat.error;spect.dopplerVeloc":         RVErr,
		"pos.eq.ra;pos.frame=icrs":              -1,
		"phot.mag;em.opt.V":                     -1,
		"stat.error;pos.eq.ra;meta.main":        RAErr,
		"POS.EQ.RA":                             RA, // UCD words are case-insensitive
		"stat.error":                            -1,
		"":                                      -1,
		"pos.eq.ra.something":                   -1, // never a substring match
		"stat.correlation;pos.eq.ra;pos.eq.dec": -1,
	} {
		got, ok := FieldByUCD(ucd)
		if (want < 0 && ok) || (want >= 0 && (!ok || got != want)) {
			t.Errorf("FieldByUCD(%q) = %v, %v; want %v", ucd, got, ok, want)
		}
	}
}

// Unit spellings of IVOA VOUnits 1.0 (2014) and the FITS Standard 4.0,
// section 4.3, turn into our unit words; a unit we cannot convert is an
// error that names the field.
func TestFileUnit(t *testing.T) {
	for _, c := range []struct {
		f          Field
		unit, want string
	}{
		{PMRA, "mas.yr**-1", ""}, {PMRA, "mas/yr", ""}, {PMRA, "mas yr-1", ""}, {PMDec, "arcsec.yr**-1", "arcsec/yr"},
		{RV, "km.s**-1", ""}, {RV, "km s-1", ""}, {RV, "m.s**-1", "m/s"}, {RV, "m/s", "m/s"},
		{RA, "deg", ""}, {RA, "degree", ""}, {RA, "h", "hour"}, {Dec, "deg", ""},
		{Parallax, "mas", ""}, {Parallax, "arcsec", "arcsec"}, {Parallax, "uarcsec", "uarcsec"},
		{Distance, "pc", "pc"}, {Distance, "kpc", ""}, {SNR, "", ""}, {FitResidual, "-", ""},
	} {
		got, err := FileUnit(c.f, c.unit)
		if err != nil || got != c.want {
			t.Errorf("FileUnit(%s, %q) = %q, %v; want %q", Fields[c.f].Name, c.unit, got, err, c.want)
		}
	}
	for _, c := range []struct {
		f    Field
		unit string
	}{{RV, "km/h"}, {Dec, "h"}, {Parallax, "mas/yr"}, {SNR, "mag"}} {
		if _, err := FileUnit(c.f, c.unit); !errors.Is(err, ErrBadUnit) {
			t.Errorf("FileUnit(%s, %q): %v, want ErrBadUnit", Fields[c.f].Name, c.unit, err)
		}
	}
	// 1 uarcsec = 1e-3 mas (SI prefixes).
	if f := unitFactor(Parallax, "uarcsec"); f != 1e-3 {
		t.Errorf("uarcsec factor %g", f)
	}
}

func TestMapByMetadata(t *testing.T) {
	cols := []ColumnMeta{
		{Name: "designation", UCD: "meta.id;meta.main"},
		{Name: "RAJ2000", Unit: "deg", UCD: "pos.eq.ra;meta.main"},
		{Name: "DEJ2000", Unit: "deg", UCD: "pos.eq.dec;meta.main"},
		{Name: "plx", Unit: "mas", UCD: "pos.parallax.trig"},
		{Name: "e_plx", Unit: "uarcsec", UCD: "stat.error;pos.parallax.trig"},
		{Name: "pm_ra", Unit: "mas.yr**-1"}, // by name
		{Name: "vr", Unit: "m.s**-1", UCD: "spect.dopplerVeloc"},
		{Name: "rv"}, // named like a field, but vr is rv by its UCD: two ways
		{Name: "flux", Unit: "erg/s", UCD: "phot.flux"}, // unused; its unit is nobody's business
	}
	_, err := Spec{File: "x.vot"}.Map(cols)
	if !errors.Is(err, ErrMappedTwice) {
		t.Fatalf("rv by name and vr by UCD: %v, want ErrMappedTwice", err)
	}
	m, err := Spec{File: "x.vot", Columns: map[string]string{"rv": "vr"}}.Map(cols)
	if err != nil {
		t.Fatal(err)
	}
	for f, want := range map[Field]struct {
		col      int
		by, unit string
	}{
		ID: {0, ByUCD, ""}, RA: {1, ByUCD, ""}, Dec: {2, ByUCD, ""}, Parallax: {3, ByUCD, ""},
		ParallaxErr: {4, ByUCD, "uarcsec"}, PMRA: {5, ByName, ""}, RV: {6, ByCampaign, "m/s"},
	} {
		if m.Column[f] != want.col || m.MappedBy[f] != want.by || m.Unit[f] != want.unit {
			t.Errorf("%s: column %d by %q unit %q; want %d %q %q", Fields[f].Name, m.Column[f], m.MappedBy[f], m.Unit[f], want.col, want.by, want.unit)
		}
	}
	if m.Column[RVErr] != -1 || m.Column[PMDec] != -1 {
		t.Errorf("unmapped fields got columns: rv_err %d pm_dec %d", m.Column[RVErr], m.Column[PMDec])
	}
	// The campaign's unit wins over the file's.
	m, err = Spec{File: "x.vot", Columns: map[string]string{"rv": "vr"}, Units: map[string]string{"rv": "km/s"}}.Map(cols)
	if err != nil || m.Unit[RV] != "km/s" || m.UnitFrom[RV] != "campaign" {
		t.Errorf("campaign unit: %q from %q, %v", m.Unit[RV], m.UnitFrom[RV], err)
	}
	// Two columns with one UCD.
	two := append(append([]ColumnMeta(nil), cols[:4]...), ColumnMeta{Name: "plx2", UCD: "pos.parallax.trig"})
	if _, err := (Spec{File: "x.vot"}).Map(two); !errors.Is(err, ErrMappedTwice) {
		t.Errorf("two parallax UCDs: %v", err)
	}
	// A mapped column whose unit cannot be converted.
	bad := append(append([]ColumnMeta(nil), cols[:3]...), ColumnMeta{Name: "plx", Unit: "km", UCD: "pos.parallax.trig"})
	if _, err := (Spec{File: "x.vot"}).Map(bad); !errors.Is(err, ErrBadUnit) {
		t.Errorf("parallax in km: %v", err)
	}
}

// A binary reader's rows: values in file units, NaN for null, positions
// as rows.
func TestBuilderFromMeta(t *testing.T) {
	cols := []ColumnMeta{
		{Name: "id"}, {Name: "ra", Unit: "h"}, {Name: "dec", Unit: "deg"},
		{Name: "plx", Unit: "uarcsec", UCD: "pos.parallax.trig"}, {Name: "other"},
	}
	b, _, err := NewBuilderFromMeta(Spec{Name: "lark", File: "t.fits"}, cols, true, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	l := b.Layout()
	rows := []struct {
		id   string
		vals []float64 // ra (h), dec, plx (uarcsec) in Columns order
	}{
		{"a", []float64{1, 10, 2500}},
		{"b", []float64{2, 95, 100}},         // dec out of range
		{"c", []float64{math.NaN(), 0, 100}}, // ra missing
		{"a", []float64{3, 0, math.NaN()}},   // duplicate id
		{"", []float64{4, 0, 1}},             // id missing
		{"d", []float64{5, -5, math.NaN()}},
	}
	var bt Batch
	bt.Begin(l, len(rows))
	var raw rawRows
	for i, r := range rows {
		at := i + 1
		raw = append(raw, []string{r.id})
		if r.id == "" {
			bt.Reject(at, l.MissingID(at))
			continue
		}
		if q := l.ConvertValues(r.vals, bt.Row(), at); q != nil {
			bt.Reject(at, q)
			continue
		}
		bt.Add(at, []byte(r.id))
	}
	bt.End()
	if err := b.Add(&bt, raw); err != nil {
		t.Fatal(err)
	}
	tab, rep := b.Finish()
	if rep.RowsKept != 2 || rep.RowsRead != 6 || len(rep.Quarantined) != 4 {
		t.Fatalf("kept %d of %d, quarantined %d", rep.RowsKept, rep.RowsRead, len(rep.Quarantined))
	}
	// 1 h of ra = 15 deg; 2500 uarcsec = 2.5 mas.
	if tab.Cols[RA][0] != 15 || tab.Cols[Parallax][0] != 2.5 || !math.IsNaN(tab.Cols[Parallax][1]) || tab.Lines[1] != 6 {
		t.Errorf("ra %v parallax %v rows %v", tab.Cols[RA], tab.Cols[Parallax], tab.Lines)
	}
	for i, want := range []struct {
		row int
		col string
		err error
	}{{2, "dec", ErrOutOfRange}, {3, "ra", ErrMissingValue}, {4, "id", ErrDuplicateID}, {5, "id", ErrMissingValue}} {
		q := rep.Quarantined[i]
		if q.Row != want.row || q.Line != 0 || q.ColumnName != want.col || !errors.Is(q.Err, want.err) {
			t.Errorf("quarantine %d: row %d line %d column %q %v; want row %d %q %v", i, q.Row, q.Line, q.ColumnName, q.Err, want.row, want.col, want.err)
		}
	}
	if e := rep.Quarantined[0].Error("t.fits").Error(); e != `t.fits: row 2: column "dec" value "95": out of range: dec must be in [-90, 90] deg` {
		t.Errorf("message %q", e)
	}
	if rep.MappedBy["parallax"] != ByUCD || rep.MappedBy["ra"] != ByName || len(rep.Unused) != 1 || rep.Unused[0] != "other" {
		t.Errorf("mapped by %v, unused %v", rep.MappedBy, rep.Unused)
	}
}

type rawRows [][]string

func (r rawRows) Record(i int) []string  { return r[i] }
func (r rawRows) FieldLine(i, _ int) int { return i + 1 }

// A campaign giving distance in mag reads distance_err in mag too, as the
// delimited-text reader does (Spec.units).
func TestMapDistanceModulusUnits(t *testing.T) {
	cols := []ColumnMeta{{Name: "id"}, {Name: "ra"}, {Name: "dec"}, {Name: "dm", Unit: "mag"}, {Name: "distance_err", Unit: "mag"}}
	m, err := Spec{File: "x.fits", Columns: map[string]string{"distance": "dm"}, Units: map[string]string{"distance": "mag"}}.Map(cols)
	if err != nil {
		t.Fatal(err)
	}
	if m.Unit[Distance] != "mag" || m.Unit[DistanceErr] != "mag" || m.UnitFrom[DistanceErr] != "campaign" {
		t.Errorf("distance %q, distance_err %q from %q", m.Unit[Distance], m.Unit[DistanceErr], m.UnitFrom[DistanceErr])
	}
}
