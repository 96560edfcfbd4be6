package campaign

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/catalog/ingest"
	"starvet/internal/position"
)

const testDir = "../testdata/ingest/campaign"

func TestLoadFull(t *testing.T) {
	c, err := Load(filepath.Join(testDir, "full.toml"))
	if err != nil {
		t.Fatal(err)
	}
	dir, _ := filepath.Abs(testDir)
	ingestDir := filepath.Dir(dir)
	checks := []struct {
		name      string
		got, want any
	}{
		{"dir", c.Dir, dir},
		{"name", c.Name, "spring-halo-search"},
		{"seed", c.Seed, int64(20261201)},
		{"ledger", c.Ledger, filepath.Join(dir, "out", "ledger.db")},
		{"rules", c.Rules, filepath.Join(dir, "rules", "strict.toml")},
		{"zero point", c.ParallaxZeroPointMas, -0.017},
		{"null markers", c.NullMarkers, []string{"", "NaN", "null", "-999"}},
		{"match", c.Match, Match{RadiusArcsec: 2, NSigma: 5, RadiusFloorArcsec: 0.3, DuplicateRadiusArcsec: 0.25, AmbiguityRatio: 4}},
		{"catalogs", len(c.Catalogs), 3},
		{"cat0 file", c.Catalogs[0].File, filepath.Join(ingestDir, "auto.csv")},
		{"cat0 role", c.Catalogs[0].Role, catalog.Astrometry},
		{"cat0 epoch", c.Catalogs[0].EpochJyr, 2017.5},
		{"cat0 release", c.Catalogs[0].Release, "L2"},
		{"cat0 line", c.Catalogs[0].Line, 16},
		{"cat0 markers inherited", c.Catalogs[0].NullMarkers, []string{"", "NaN", "null", "-999"}},
		{"cat0 pos err (primary: no fallback)", c.Catalogs[0].PositionErrMas, 0.0},
		{"cat1 columns", c.Catalogs[1].Columns, map[string]string{"id": "src", "ra": "RA_h", "distance": "dist"}},
		{"cat1 units", len(c.Catalogs[1].Units), 9},
		{"cat1 markers own", c.Catalogs[1].NullMarkers, []string{""}},
		{"cat1 pos err", c.Catalogs[1].PositionErrMas, 250.0},
		{"cat2 pos err default", c.Catalogs[2].PositionErrMas, DefaultSecondaryPositionErrMas},
		{"cat2 role", c.Catalogs[2].Role, catalog.Photometry},
		{"galaxy", c.Galaxy, Galaxy{SunDistanceKpc: 8.2, SunHeightPc: 25, SunVelocityKms: [3]float64{11.1, 250, 7.25}}},
		{"potential", c.Potential, Potential{EscapeRadiusKpc: 50, Components: []Component{
			{Kind: "point", MassMsun: 4e6}, {Kind: "hernquist", MassMsun: 3.76e9, AKpc: 0.1},
			{Kind: "miyamoto-nagai", MassMsun: 6e10, AKpc: 2.75, BKpc: 0.3}, {Kind: "nfw", MassMsun: 8e11, ScaleKpc: 20}}}},
		{"kinematics", c.Kinematics, Kinematics{Distance: "edsd", EDSDLengthKpc: 1.5, MinParallaxSignificance: 4, Samples: 500, VelocityPriorKms: 120,
			UnboundP: 0.9, MarginalP: 0.6, TraceMinP: 0.4, StopSigma: 5, StopTailVEscFraction: 0.75, TraceSamples: 100, TraceMyr: 250, GCRadiusKpc: 2, DiskRadiusKpc: 30}},
	}
	for _, ch := range checks {
		t.Run(ch.name, func(t *testing.T) {
			if !reflect.DeepEqual(ch.got, ch.want) {
				t.Errorf("got %#v, want %#v", ch.got, ch.want)
			}
		})
	}
	if c.Primary().Name != "lark_astro" || len(c.Secondaries()) != 2 || c.Secondaries()[1].Name != "heron_phot" {
		t.Errorf("primary %q, secondaries %d", c.Primary().Name, len(c.Secondaries()))
	}
	// The specs must be directly usable by the reader.
	for _, cs := range c.Catalogs {
		tab, rep, err := ingest.Read(context.Background(), cs.Spec, catalog.ReadOptions{Strict: true})
		if err != nil {
			t.Errorf("%s: %v", cs.Name, err)
			continue
		}
		if tab.Len() == 0 || rep.RowsKept != tab.Len() || tab.Name != cs.Name {
			t.Errorf("%s: %d rows", cs.Name, tab.Len())
		}
	}
}

func TestDefaults(t *testing.T) {
	c, err := Load(filepath.Join(testDir, "minimal.toml"))
	if err != nil {
		t.Fatal(err)
	}
	dir, _ := filepath.Abs(testDir)
	checks := []struct {
		name      string
		got, want any
	}{
		{"name from file", c.Name, "minimal"},
		{"seed", c.Seed, int64(1)},
		{"ledger beside file", c.Ledger, filepath.Join(dir, "starvet.db")},
		{"rules", c.Rules, "default"},
		{"zero point", c.ParallaxZeroPointMas, 0.0},
		{"null markers", c.NullMarkers, []string{"", "NaN", "null"}},
		// n_sigma unset: no floor.
		{"match", c.Match, Match{RadiusArcsec: 1, DuplicateRadiusArcsec: 0.4, AmbiguityRatio: 3}},
		// R0: GRAVITY Collaboration 2018, A&A 615, L15; z_sun: Bennett & Bovy
		// 2019, MNRAS 482, 1417; (U,V,W): Drimmel & Poggio 2018, RNAAS 2, 210.
		{"galaxy", c.Galaxy, Galaxy{SunDistanceKpc: 8.122, SunHeightPc: 20.8, SunVelocityKms: [3]float64{12.9, 245.6, 7.78}}},
		{"potential left to integrator", c.Potential, Potential{}},
		{"kinematics", c.Kinematics, Kinematics{Distance: "auto", EDSDLengthKpc: 1.35, MinParallaxSignificance: 5, Samples: 1000, VelocityPriorKms: 150,
			UnboundP: 0.8, MarginalP: 0.5, TraceMinP: 0.5, StopSigma: 5, StopTailVEscFraction: 0.75, TraceSamples: 200, TraceMyr: 300, GCRadiusKpc: 1, DiskRadiusKpc: 25}},
		{"primary pos err", c.Catalogs[0].PositionErrMas, 0.0},
		{"secondary pos err", c.Catalogs[1].PositionErrMas, 100.0},
		{"markers", c.Catalogs[1].NullMarkers, []string{"", "NaN", "null"}},
	}
	for _, ch := range checks {
		t.Run(ch.name, func(t *testing.T) {
			if !reflect.DeepEqual(ch.got, ch.want) {
				t.Errorf("got %#v, want %#v", ch.got, ch.want)
			}
		})
	}
	p, err := Parse("x.toml", []byte(baseText+"[match]\nn_sigma = 3\n"), "/tmp")
	if err != nil {
		t.Fatal(err)
	}
	if p.Match.RadiusFloorArcsec != 0.5 {
		t.Errorf("floor with n_sigma = %v, want 0.5", p.Match.RadiusFloorArcsec)
	}
}

// baseText is a valid campaign of 11 lines; cases append from line 12.
const baseText = `[[catalog]]
name = "lark_astro"
file = "lark.csv"
role = "astrometry"
epoch = 2017.5

[[catalog]]
name = "wren_spec"
file = "wren.csv.gz"
role = "spectroscopy"
epoch = 2020.5
`

func TestErrors(t *testing.T) {
	cases := []struct {
		name string
		text string
		err  error
		line int
		col  int // counted by hand
		key  string
	}{
		{"unknown top key", "colour = 1\n" + baseText, ErrUnknownKey, 1, 1, "colour"},
		{"unknown match key", baseText + "[match]\nradius = 1\n", ErrUnknownKey, 13, 1, "match.radius"},
		{"unknown catalog key", strings.Replace(baseText, "epoch = 2020.5", "epoch = 2020.5\nepoc = 2000", 1), ErrUnknownKey, 12, 1, "catalog.epoc"},
		{"unknown table", baseText + "[galaxi]\nsun_height_pc = 1\n", ErrUnknownKey, 12, 1, "galaxi"},
		{"unknown component key", baseText + "[potential]\n[[potential.component]]\nkind = \"point\"\nmass_msun = 1e6\nmass = 1\n", ErrUnknownKey, 16, 1, "potential.component.mass"},
		{"unknown column field", baseText + "[catalog.columns]\nparalax = \"plx\"\n", ErrUnknownField, 13, 1, "catalog[2].columns.paralax"},
		{"derived column field", baseText + "[catalog.columns]\ndistance_modulus = \"dm\"\n", ErrUnknownField, 13, 1, "catalog[2].columns.distance_modulus"},
		{"unknown unit field", baseText + "[catalog.units]\nvelocity = \"m/s\"\n", ErrUnknownField, 13, 1, "catalog[2].units.velocity"},
		{"unknown unit", baseText + "[catalog.units]\nrv = \"mph\"\n", ErrBadUnit, 13, 1, "catalog[2].units.rv"},
		{"unit for wrong field", baseText + "[catalog.units]\ndec = \"hour\"\n", ErrBadUnit, 13, 1, "catalog[2].units.dec"},
		{"modulus error without modulus", baseText + "[catalog.units]\ndistance_err = \"mag\"\n", ErrBadUnit, 12, 1, "catalog[2].units"},
		{"bad role", strings.Replace(baseText, `"spectroscopy"`, `"spectra"`, 1), ErrBadValue, 10, 1, "catalog[2].role"},
		{"two astrometry", strings.Replace(baseText, `"spectroscopy"`, `"astrometry"`, 1), ErrBadValue, 10, 1, "catalog[2].role"},
		{"no astrometry", strings.Replace(baseText, `"astrometry"`, `"photometry"`, 1), ErrBadValue, 0, 0, "catalog"},
		{"duplicate name", strings.Replace(baseText, `"wren_spec"`, `"lark_astro"`, 1), ErrBadValue, 8, 1, "catalog[2].name"},
		{"bad name", strings.Replace(baseText, `"wren_spec"`, `"Wren-Spec"`, 1), ErrBadValue, 8, 1, "catalog[2].name"},
		{"bad suffix", strings.Replace(baseText, `"wren.csv.gz"`, `"wren.dat"`, 1), ErrBadValue, 9, 1, "catalog[2].file"},
		{"unknown format", strings.Replace(baseText, `file = "wren.csv.gz"`, "file = \"wren.dat\"\nformat = \"spreadsheet\"", 1), ErrBadValue, 10, 1, "catalog[2].format"},
		{"hdu for a csv file", strings.Replace(baseText, `file = "wren.csv.gz"`, "file = \"wren.csv.gz\"\nhdu = 2", 1), ErrBadValue, 10, 1, "catalog[2].hdu"},
		{"table for a fits file", strings.Replace(baseText, `file = "wren.csv.gz"`, "file = \"wren.fits\"\ntable = \"main\"", 1), ErrBadValue, 10, 1, "catalog[2].table"},
		{"bad delimiter", strings.Replace(baseText, `file = "wren.csv.gz"`, "file = \"wren.csv.gz\"\ndelimiter = \"|\"", 1), ErrBadValue, 10, 1, "catalog[2].delimiter"},
		{"missing epoch", strings.Replace(baseText, "epoch = 2020.5\n", "", 1), ErrMissing, 7, 1, "catalog[2].epoch"},
		{"negative radius", baseText + "[match]\nradius_arcsec = -1\n", ErrBadValue, 13, 1, "match.radius_arcsec"},
		{"zero radius", baseText + "[match]\nradius_arcsec = 0\n", ErrBadValue, 13, 1, "match.radius_arcsec"},
		{"negative duplicate radius", baseText + "[match]\nduplicate_radius_arcsec = -0.1\n", ErrBadValue, 13, 1, "match.duplicate_radius_arcsec"},
		{"ambiguity below one", baseText + "[match]\nambiguity_ratio = 0.5\n", ErrBadValue, 13, 1, "match.ambiguity_ratio"},
		{"floor without n_sigma", baseText + "[match]\nradius_floor_arcsec = 0.2\n", ErrBadValue, 13, 1, "match.radius_floor_arcsec"},
		{"negative position error", strings.Replace(baseText, "epoch = 2020.5", "epoch = 2020.5\nposition_err_mas = -5", 1), ErrBadValue, 12, 1, "catalog[2].position_err_mas"},
		{"type error", "seed = \"x\"\n" + baseText, ErrSyntax, 1, 1, ""},
		{"syntax error", baseText + "seed = \n", ErrSyntax, 12, 8, ""}, // the newline after "seed = "
		{"indented type error", "  seed = \"x\"\n" + baseText, ErrSyntax, 1, 3, ""},
		{"indented key", baseText + "[match]\n    radius_arcsec = -1\n", ErrBadValue, 13, 5, "match.radius_arcsec"},
		{"indented header", baseText + "\t[galaxi]\n", ErrUnknownKey, 12, 2, "galaxi"},
		{"velocity needs 3", baseText + "[galaxy]\nsun_velocity_kms = [1, 2]\n", ErrBadValue, 13, 1, "galaxy.sun_velocity_kms"},
		{"model and components", baseText + "[potential]\nmodel = \"kenyon08-adjusted\"\n[[potential.component]]\nkind = \"point\"\nmass_msun = 1e6\n", ErrBadValue, 13, 1, "potential.model"},
		{"unknown model", baseText + "[potential]\nmodel = \"mine\"\n", ErrBadValue, 13, 1, "potential.model"},
		{"bad component", baseText + "[potential]\n[[potential.component]]\nkind = \"point\"\nmass_msun = 1e6\n[[potential.component]]\nkind = \"miyamoto-nagai\"\nmass_msun = 1e10\na_kpc = 3\nb_kpc = -1\n", ErrBadValue, 20, 1, "potential.component[2].b_kpc"},
		{"negative escape radius", baseText + "[potential]\nescape_radius_kpc = -1\n", ErrBadValue, 13, 1, "potential.escape_radius_kpc"},
		{"distance method", baseText + "[kinematics]\ndistance = \"guess\"\n", ErrBadValue, 13, 1, "kinematics.distance"},
		{"probability above one", baseText + "[kinematics]\nunbound_p = 1.5\n", ErrBadValue, 13, 1, "kinematics.unbound_p"},
		{"marginal above unbound", baseText + "[kinematics]\nunbound_p = 0.4\n", ErrBadValue, 12, 1, "kinematics.marginal_p"},
		{"zero samples", baseText + "[kinematics]\nsamples = 0\n", ErrBadValue, 13, 1, "kinematics.samples"},
		{"samples not integer", baseText + "[kinematics]\nsamples = 10.5\n", ErrSyntax, 13, 1, ""},
		{"negative edsd length", baseText + "[kinematics]\nedsd_length_kpc = -1\n", ErrBadValue, 13, 1, "kinematics.edsd_length_kpc"},
		{"negative velocity prior", baseText + "[kinematics]\nvelocity_prior_kms = -5\n", ErrBadValue, 13, 1, "kinematics.velocity_prior_kms"},
		{"dotted key in table", strings.Replace(baseText, "epoch = 2020.5", "epoch = 2020.5\ncolumns.paralax = \"p\"", 1), ErrUnknownField, 12, 1, "catalog[2].columns.paralax"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse("camp.toml", []byte(c.text), "/data")
			if err == nil {
				t.Fatal("no error")
			}
			if !errors.Is(err, c.err) {
				t.Fatalf("err %v, want %v", err, c.err)
			}
			var e *position.Error
			if !errors.As(err, &e) {
				t.Fatalf("err %T is not *position.Error", err)
			}
			if es, ok := err.(position.Errors); ok && len(es) != 1 {
				t.Errorf("want exactly one problem, got:\n%v", err)
			}
			if e.Line != c.line || e.Col != c.col || e.What != c.key || e.Name != c.key || e.File != "camp.toml" {
				t.Errorf("got %s:%d:%d key %q (%v), want line %d col %d key %q", e.File, e.Line, e.Col, e.What, err, c.line, c.col, c.key)
			}
			if want := "camp.toml:"; !strings.HasPrefix(err.Error(), want) {
				t.Errorf("message %q lacks file prefix", err)
			}
		})
	}
}

func TestAllErrorsReported(t *testing.T) {
	text := "colour = 1\n" + strings.Replace(baseText, `"spectroscopy"`, `"spectra"`, 1) + "[match]\nradius_arcsec = -1\n"
	_, err := Parse("camp.toml", []byte(text), "/data")
	var es position.Errors
	if !errors.As(err, &es) || len(es) != 3 {
		t.Fatalf("want 3 errors, got %v", err)
	}
	if !errors.Is(err, ErrUnknownKey) || !errors.Is(err, ErrBadValue) {
		t.Errorf("errors.Is fails on %v", err)
	}
	want := "camp.toml:1:1: colour: unknown key"
	if es[0].Error() != want {
		t.Errorf("first error %q, want %q", es[0], want)
	}
}

func TestEmptyNullMarkers(t *testing.T) {
	c, err := Parse("camp.toml", []byte("null_markers = []\n"+baseText), "/data")
	if err != nil {
		t.Fatal(err)
	}
	for _, cs := range c.Catalogs {
		if cs.NullMarkers == nil || len(cs.NullMarkers) != 0 {
			t.Errorf("%s: markers %#v, want empty non-nil (nil would mean the defaults)", cs.Name, cs.NullMarkers)
		}
	}
}

func TestMarginalLine(t *testing.T) {
	_, err := Parse("camp.toml", []byte(baseText+"[kinematics]\nunbound_p = 0.4\nmarginal_p = 0.45\n"), "/data")
	var e *position.Error
	if !errors.As(err, &e) || e.Line != 14 || e.Col != 1 || e.What != "kinematics.marginal_p" {
		t.Errorf("got %v", err)
	}
}

func TestLoadMissing(t *testing.T) {
	_, err := Load(filepath.Join(testDir, "absent.toml"))
	if !errors.Is(err, ErrRead) || !errors.Is(err, os.ErrNotExist) {
		t.Errorf("got %v", err)
	}
}

func TestHashes(t *testing.T) {
	parse := func(t *testing.T, text, dir string) *Campaign {
		t.Helper()
		c, err := Parse("h.toml", []byte(text), dir)
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	base := parse(t, baseText, "/data/a")
	// Same effective settings written differently: explicit defaults,
	// other key order, integer for float.
	same := "seed = 1\nrules = \"default\"\nledger = \"starvet.db\"\n[match]\nambiguity_ratio = 3\nradius_arcsec = 1.0\n" +
		`[[catalog]]
epoch = 2017.5
role = "astrometry"
file = "lark.csv"
name = "lark_astro"
[[catalog]]
name = "wren_spec"
role = "spectroscopy"
file = "wren.csv.gz"
epoch = 2020.5
position_err_mas = 100
null_markers = ["", "NaN", "null"]
[kinematics]
samples = 1000
`
	cases := []struct {
		name                 string
		c                    *Campaign
		match, model, allChg bool
	}{
		{"explicit defaults", parse(t, same, "/data/a"), false, false, false},
		{"moved directory", parse(t, baseText, "/elsewhere/b"), false, false, false},
		{"match radius", parse(t, baseText+"[match]\nradius_arcsec = 1.5\n", "/data/a"), true, false, true},
		{"catalog unit", parse(t, baseText+"[catalog.units]\nrv = \"m/s\"\n", "/data/a"), true, false, true},
		{"seed", parse(t, "seed = 2\n"+baseText, "/data/a"), false, true, true},
		{"zero point", parse(t, "parallax_zero_point_mas = -0.017\n"+baseText, "/data/a"), false, true, true},
		{"galaxy", parse(t, baseText+"[galaxy]\nsun_height_pc = 25\n", "/data/a"), false, true, true},
		{"potential", parse(t, baseText+"[potential]\nmodel = \"kenyon08-adjusted\"\n", "/data/a"), false, true, true},
		{"kinematics", parse(t, baseText+"[kinematics]\nsamples = 2000\n", "/data/a"), false, true, true},
		{"ledger", parse(t, "ledger = \"other.db\"\n"+baseText, "/data/a"), false, false, true},
		{"name", parse(t, "name = \"x\"\n"+baseText, "/data/a"), false, false, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.c.MatchHash() != base.MatchHash(); got != c.match {
				t.Errorf("match hash changed = %v, want %v", got, c.match)
			}
			if got := c.c.ModelHash() != base.ModelHash(); got != c.model {
				t.Errorf("model hash changed = %v, want %v", got, c.model)
			}
			if got := c.c.Hash() != base.Hash(); got != c.allChg {
				t.Errorf("hash changed = %v, want %v", got, c.allChg)
			}
			fp := c.c.Fingerprint()
			if fp.Match != c.c.MatchHash() || fp.Model != c.c.ModelHash() || fp.All != c.c.Hash() || len(fp.All) != 64 {
				t.Errorf("fingerprint %+v inconsistent", fp)
			}
		})
	}
}

// A campaign that still uses a retired name fails, naming the new word, and
// a catalog header spelled like the retired field still maps like any
// other header.
func TestRetiredNames(t *testing.T) {
	for _, c := range []struct {
		name, text, key, want string
	}{
		{"kinematics key", baseText + "[kinematics]\nmin_parallax_over_error = 4\n", "kinematics.min_parallax_over_error",
			"camp.toml:13:1: kinematics.min_parallax_over_error: unknown key; min_parallax_over_error was renamed min_parallax_significance"},
		{"column field", baseText + "[catalog.columns]\nvisibility_periods = \"vp\"\n", "catalog[2].columns.visibility_periods",
			`camp.toml:13:1: catalog[2].columns.visibility_periods: "visibility_periods" is not a canonical field; visibility_periods was renamed fit_visits`},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse("camp.toml", []byte(c.text), "/data")
			var e *position.Error
			if !errors.As(err, &e) {
				t.Fatalf("err %v is not *position.Error", err)
			}
			if e.Line != 13 || e.Col != 1 || e.What != c.key || err.Error() != c.want {
				t.Errorf("got %v (%d:%d key %q), want %s", err, e.Line, e.Col, e.What, c.want)
			}
		})
	}
	mapped := baseText + "[catalog.columns]\nfit_visits = \"visibility_periods\"\n"
	c, err := Parse("camp.toml", []byte(mapped), "/data")
	if err != nil {
		t.Fatal(err)
	}
	if h := c.Catalogs[1].Columns["fit_visits"]; h != "visibility_periods" {
		t.Errorf("fit_visits maps to header %q, want visibility_periods", h)
	}
}

// A value of the wrong type keeps the decoder's words after its line, and
// gains the key's column from the scan.
func TestTypeErrorMessage(t *testing.T) {
	_, err := Parse("camp.toml", []byte("  seed = \"x\"\n"+baseText), "/data")
	if want := `camp.toml:1:3: (last key "seed"): incompatible types`; err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Errorf("got %v, want it to start with %s", err, want)
	}
}

// The format keys reach the catalog's spec: an HDU by number, a table by
// name, a delimiter, and a format named explicitly for an unusual ending.
func TestFormatKeys(t *testing.T) {
	for _, c := range []struct {
		repl string
		want catalog.Spec
	}{
		{"file = \"wren.fits.gz\"\nhdu = 2", catalog.Spec{HDU: "2"}},
		{"file = \"wren.fits\"\nhdu = \"SPECTRA\"", catalog.Spec{HDU: "SPECTRA"}},
		{"file = \"wren.vot\"\ntable = \"main\"", catalog.Spec{Table: "main"}},
		{"file = \"wren.csv\"\ndelimiter = \";\"", catalog.Spec{Delimiter: ";"}},
		{"file = \"wren.txt\"\nformat = \"csv\"\ndelimiter = \"\\t\"", catalog.Spec{Format: "csv", Delimiter: "\t"}},
	} {
		text := strings.Replace(baseText, `file = "wren.csv.gz"`, c.repl, 1)
		camp, err := Parse("camp.toml", []byte(text), "/data")
		if err != nil {
			t.Errorf("%q: %v", c.repl, err)
			continue
		}
		s := camp.Catalogs[1].Spec
		if s.Format != c.want.Format || s.HDU != c.want.HDU || s.Table != c.want.Table || s.Delimiter != c.want.Delimiter {
			t.Errorf("%q: format %q hdu %q table %q delimiter %q", c.repl, s.Format, s.HDU, s.Table, s.Delimiter)
		}
	}
}

// The [slurm] table is read, checked, and enters no fingerprint: changing
// where tiles run changes no result.
func TestSlurmTable(t *testing.T) {
	plain, err := Parse("camp.toml", []byte(baseText), "/data")
	if err != nil {
		t.Fatal(err)
	}
	c, err := Parse("camp.toml", []byte(baseText+"[slurm]\npartition = \"long\"\naccount = \"grp\"\ntime = \"01:00:00\"\nmem = \"4G\"\ntiles_per_task = 3\nmax_running = 20\n"), "/data")
	if err != nil {
		t.Fatal(err)
	}
	want := Slurm{Partition: "long", Account: "grp", Time: "01:00:00", Mem: "4G", TilesPerTask: 3, MaxRunning: 20}
	if c.Slurm != want {
		t.Errorf("slurm %+v, want %+v", c.Slurm, want)
	}
	if c.Hash() != plain.Hash() || c.ModelHash() != plain.ModelHash() || c.MatchHash() != plain.MatchHash() {
		t.Error("the [slurm] table changed a fingerprint")
	}
	for _, bad := range []string{"[slurm]\nqueue = \"x\"\n", "[slurm]\nmax_running = -1\n"} {
		if _, err := Parse("camp.toml", []byte(baseText+bad), "/data"); err == nil {
			t.Errorf("%q accepted", bad)
		}
	}
}
