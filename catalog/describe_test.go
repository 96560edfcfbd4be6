package catalog

import (
	"errors"
	"reflect"
	"strings"
	"testing"
)

// A binary table as a self-describing file gives it: UCD1+ words and
// VOUnits spellings. The names are invented and deliberately unlike our
// field names, so only the UCDs can map them.
var describedCols = []ColumnMeta{
	{Name: "srcid", Datatype: "K", UCD: "meta.id;meta.main"},
	{Name: "alpha", Datatype: "D", Unit: "deg", UCD: "pos.eq.ra;meta.main"},
	{Name: "delta", Datatype: "D", Unit: "deg", UCD: "pos.eq.dec;meta.main"},
	{Name: "plx", Datatype: "E", Unit: "mas", UCD: "pos.parallax.trig"},
	{Name: "e_plx", Datatype: "E", Unit: "mas", UCD: "stat.error;pos.parallax.trig"},
	{Name: "mu_a", Datatype: "E", Unit: "mas.yr**-1", UCD: "pos.pm;pos.eq.ra"},
	{Name: "e_mu_a", Datatype: "E", Unit: "mas yr-1", UCD: "stat.error;pos.pm;pos.eq.ra"},
	{Name: "vlos", Datatype: "E", Unit: "m.s**-1", UCD: "spect.dopplerVeloc"},
	{Name: "snr", Datatype: "E"},
	{Name: "flux_g", Datatype: "E", Unit: "mJy", UCD: "phot.flux"},
}

func TestDescribe(t *testing.T) {
	type want struct{ field, by, unit, from string }
	for _, c := range []struct {
		name    string
		spec    Spec
		cols    []ColumnMeta
		rows    []want // per column; field "" = feeds nothing
		missing []string
	}{
		{
			name: "by UCD and name, units from the file",
			spec: Spec{File: "stars.fits"},
			cols: describedCols,
			rows: []want{
				{"id", ByUCD, "", ""},
				{"ra", ByUCD, "deg", "file"},
				{"dec", ByUCD, "deg", "file"},
				{"parallax", ByUCD, "mas", "file"},
				{"parallax_err", ByUCD, "mas", "file"},
				{"pm_ra", ByUCD, "mas/yr", "file"},
				{"pm_ra_err", ByUCD, "mas/yr", "file"},
				{"rv", ByUCD, "m/s", "file"},
				{"snr", ByName, "", ""},
				{},
			},
			missing: []string{"ra_err", "dec_err", "pm_dec", "pm_dec_err", "corr_ra_dec", "corr_parallax_pm_ra", "corr_parallax_pm_dec",
				"corr_pm_ra_pm_dec", "rv_err", "distance", "distance_err", "fit_residual", "excess_noise", "excess_noise_sig",
				"fit_visits", "duplicate_flag", "mag", "color"},
		},
		{
			name: "the campaign names a column and its unit",
			spec: Spec{File: "stars.fits", Columns: map[string]string{"mag": "flux_g", "pm_dec": "mu_a"}, Units: map[string]string{"pm_dec": "arcsec/yr", "mag": "mag"}},
			cols: describedCols,
			rows: []want{
				{"id", ByUCD, "", ""},
				{"ra", ByUCD, "deg", "file"},
				{"dec", ByUCD, "deg", "file"},
				{"parallax", ByUCD, "mas", "file"},
				{"parallax_err", ByUCD, "mas", "file"},
				{"pm_dec", ByCampaign, "arcsec/yr", "campaign"}, // taken from pm_ra: the campaign wins
				{"pm_ra_err", ByUCD, "mas/yr", "file"},
				{"rv", ByUCD, "m/s", "file"},
				{"snr", ByName, "", ""},
				{"mag", ByCampaign, "mag", "campaign"}, // the campaign's unit overrides the file's mJy
			},
			missing: []string{"ra_err", "dec_err", "pm_ra", "pm_dec_err", "corr_ra_dec", "corr_parallax_pm_ra", "corr_parallax_pm_dec",
				"corr_pm_ra_pm_dec", "rv_err", "distance", "distance_err", "fit_residual", "excess_noise", "excess_noise_sig",
				"fit_visits", "duplicate_flag", "color"},
		},
		{
			name: "delimited text: names only",
			spec: Spec{File: "auto.csv", Columns: map[string]string{"id": "src"}, Units: map[string]string{"ra": "hour"}},
			cols: []ColumnMeta{{Name: "src"}, {Name: "ra"}, {Name: "dec"}, {Name: "rv_err"}, {Name: "note"}},
			rows: []want{
				{"id", ByCampaign, "", ""},
				{"ra", ByName, "hour", "campaign"},
				{"dec", ByName, "deg", UnitCanonical},
				{"rv_err", ByName, "km/s", UnitCanonical},
				{},
			},
		},
		{
			name: "a distance modulus puts its error in mag too",
			spec: Spec{File: "mod.csv", Units: map[string]string{"distance": "mag"}},
			cols: []ColumnMeta{{Name: "id"}, {Name: "ra"}, {Name: "dec"}, {Name: "distance"}, {Name: "distance_err"}},
			rows: []want{
				{"id", ByName, "", ""},
				{"ra", ByName, "deg", UnitCanonical},
				{"dec", ByName, "deg", UnitCanonical},
				{"distance", ByName, "mag", "campaign"},
				{"distance_err", ByName, "mag", "campaign"},
			},
		},
	} {
		t.Run(c.name, func(t *testing.T) {
			rows, missing, err := c.spec.Describe(c.cols)
			if err != nil {
				t.Fatalf("Describe: %v", err)
			}
			if len(rows) != len(c.cols) {
				t.Fatalf("%d rows for %d columns", len(rows), len(c.cols))
			}
			for i, r := range rows {
				if r.Position != i+1 || r.ColumnMeta != c.cols[i] {
					t.Errorf("row %d: position %d, meta %+v; want %d, %+v", i, r.Position, r.ColumnMeta, i+1, c.cols[i])
				}
				got := want{r.Field, r.MappedBy, r.ReadUnit, r.UnitFrom}
				if got != c.rows[i] {
					t.Errorf("column %q: %+v, want %+v", r.Name, got, c.rows[i])
				}
			}
			if c.missing != nil {
				var names []string
				for _, f := range missing {
					names = append(names, Fields[f].Name)
				}
				if !reflect.DeepEqual(names, c.missing) {
					t.Errorf("missing %v\nwant    %v", names, c.missing)
				}
			}
		})
	}
}

func TestDescribeErrors(t *testing.T) {
	for _, c := range []struct {
		name     string
		spec     Spec
		cols     []ColumnMeta
		sentinel error
		says     []string
	}{
		{
			name:     "two columns with one UCD",
			spec:     Spec{File: "two.vot"},
			cols:     []ColumnMeta{{Name: "id"}, {Name: "ra"}, {Name: "dec"}, {Name: "plx_a", UCD: "pos.parallax.trig"}, {Name: "plx_b", UCD: "pos.parallax.trig;meta.main"}},
			sentinel: ErrMappedTwice,
			says:     []string{"two.vot", `"plx_a"`, `"plx_b"`, "parallax", "[catalog.columns]"},
		},
		{
			name:     "one column by UCD, another by name",
			spec:     Spec{File: "clash.ecsv"},
			cols:     []ColumnMeta{{Name: "id"}, {Name: "ra"}, {Name: "dec"}, {Name: "rv"}, {Name: "vhelio", UCD: "spect.dopplerVeloc"}},
			sentinel: ErrMappedTwice,
			says:     []string{"clash.ecsv", `"vhelio"`, `"rv"`, "by its UCD", "by its name"},
		},
		{
			name:     "a unit the field cannot take",
			spec:     Spec{File: "u.fits"},
			cols:     []ColumnMeta{{Name: "id"}, {Name: "ra", Unit: "rad"}, {Name: "dec", Unit: "deg"}},
			sentinel: ErrBadUnit,
			says:     []string{"u.fits", `"ra"`, `"rad"`, "[catalog.units]"},
		},
		{
			name:     "the campaign maps a column whose file unit cannot be read",
			spec:     Spec{File: "stars.fits", Columns: map[string]string{"mag": "flux_g"}},
			cols:     describedCols,
			sentinel: ErrBadUnit,
			says:     []string{"stars.fits", `"flux_g"`, `"mJy"`, "mag"},
		},
		{
			name:     "a named column the file lacks",
			spec:     Spec{File: "n.csv", Columns: map[string]string{"id": "source"}},
			cols:     []ColumnMeta{{Name: "id"}, {Name: "ra"}, {Name: "dec"}},
			sentinel: ErrMissingColumn,
			says:     []string{"n.csv", `"source"`, "id"},
		},
		{
			name:     "no column for a required field",
			spec:     Spec{File: "r.parquet"},
			cols:     []ColumnMeta{{Name: "id"}, {Name: "x"}, {Name: "y"}},
			sentinel: ErrMissingColumn,
			says:     []string{"r.parquet", "ra, dec"},
		},
		{
			name:     "a mapped name twice",
			spec:     Spec{File: "d.csv"},
			cols:     []ColumnMeta{{Name: "id"}, {Name: "ra"}, {Name: "dec"}, {Name: "ra"}},
			sentinel: ErrBadHeader,
			says:     []string{"d.csv", `"ra"`, "2 times"},
		},
		{
			name:     "a unit the campaign names wrongly",
			spec:     Spec{File: "c.csv", Units: map[string]string{"rv": "furlong"}},
			cols:     []ColumnMeta{{Name: "id"}, {Name: "ra"}, {Name: "dec"}},
			sentinel: ErrBadSpec,
			says:     []string{"c.csv", "furlong"},
		},
	} {
		t.Run(c.name, func(t *testing.T) {
			rows, _, err := c.spec.Describe(c.cols)
			if !errors.Is(err, c.sentinel) {
				t.Fatalf("err = %v, want %v", err, c.sentinel)
			}
			for _, s := range c.says {
				if !strings.Contains(err.Error(), s) {
					t.Errorf("error %q does not say %s", err, s)
				}
			}
			if len(rows) != len(c.cols) || rows[0].Name != c.cols[0].Name {
				t.Errorf("rows %+v: want one per column even with the error", rows)
			}
		})
	}
}
