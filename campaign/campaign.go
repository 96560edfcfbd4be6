package campaign

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"starvet/catalog"
	"starvet/galaxy/frames"
	"starvet/galaxy/potential"
	"starvet/internal/position"
	"starvet/internal/retired"
	"starvet/internal/tomlpos"
)

// Campaign is one parsed campaign file with every default filled in.
type Campaign struct {
	File                 string // path of the campaign file as given to Load/Parse
	Dir                  string // absolute directory of the file; relative paths start here
	Name                 string
	Seed                 int64
	Ledger               string // absolute path of the SQLite ledger
	Rules                string // "default" (embedded rule set) or an absolute path
	ParallaxZeroPointMas float64
	NullMarkers          []string
	Match                Match
	Catalogs             []CatalogSpec
	Galaxy               Galaxy
	Potential            Potential
	Kinematics           Kinematics
}

// Match holds the cross-match settings.
type Match struct {
	RadiusArcsec          float64
	NSigma                float64 // > 0: radius = NSigma x combined positional error
	RadiusFloorArcsec     float64 // lower limit of the NSigma radius
	DuplicateRadiusArcsec float64
	AmbiguityRatio        float64
}

// CatalogSpec is one [[catalog]] table. Spec.File is absolute;
// Spec.NullMarkers is the effective list (the catalog's own or the
// campaign's). Line is where the table starts in the campaign file.
type CatalogSpec struct {
	catalog.Spec
	Line int
}

// Galaxy holds the Solar position and motion.
type Galaxy struct {
	SunDistanceKpc float64
	SunHeightPc    float64
	SunVelocityKms [3]float64 // (U, V, W), Galactocentric, km/s
}

// Sun converts Galaxy to the frames type.
func (g Galaxy) Sun() frames.Sun {
	return frames.Sun{DistanceKpc: g.SunDistanceKpc, HeightPc: g.SunHeightPc, VelocityKms: g.SunVelocityKms}
}

// Potential is either a built-in model name or a list of components. Both
// empty means "the integrator's default built-in".
type Potential struct {
	Model           string
	Components      []Component
	EscapeRadiusKpc float64 // 0 = escape to infinity
}

// Component is one mass component; see potential.Component for meanings.
type Component struct {
	Kind     string
	MassMsun float64
	ScaleKpc float64
	AKpc     float64
	BKpc     float64
}

// Kinematics holds the distance and Monte Carlo settings.
type Kinematics struct {
	Distance                string // auto, inverse, edsd, catalog
	EDSDLengthKpc           float64
	MinParallaxSignificance float64
	Samples                 int
	// VelocityPriorKms is the dispersion of the isotropic normal prior on
	// the Galactocentric velocity that reweights the Monte Carlo draws
	// (kinematics package doc); 0 keeps the flat prior.
	VelocityPriorKms float64
	UnboundP         float64
	MarginalP        float64
	TraceMinP        float64
	TraceSamples     int
	TraceMyr         float64
	GCRadiusKpc      float64
	DiskRadiusKpc    float64
}

// Defaults that are not taken from another package.
const (
	DefaultSeed                  = 1
	DefaultLedger                = "starvet.db"
	DefaultRules                 = "default"
	DefaultRadiusArcsec          = 1.0
	DefaultRadiusFloorArcsec     = 0.5 // only when n_sigma > 0
	DefaultDuplicateRadiusArcsec = 0.4
	DefaultAmbiguityRatio        = 3.0
	// DefaultSecondaryPositionErrMas is the positional error assumed for a
	// spectroscopic or photometric catalog that gives none (our choice,
	// typical of fibre/slit positions); the astrometric catalog gets no
	// fallback unless position_err_mas is set.
	DefaultSecondaryPositionErrMas = 100.0
)

// DefaultVelocityPriorKms is the default velocity prior: wider than the
// stellar halo's velocity ellipsoid in every direction (sigma_r, sigma_phi,
// sigma_theta about 141, 75 and 85 km/s near the Sun, Bond et al. 2010, ApJ
// 716, 1, from memory), so it only bites where the measurement errors are
// larger than the halo's own spread. The value is our choice.
const DefaultVelocityPriorKms = 150.0

// DefaultKinematics returns the [kinematics] defaults (our choices).
func DefaultKinematics() Kinematics {
	return Kinematics{Distance: "auto", EDSDLengthKpc: 1.35, MinParallaxSignificance: 5, Samples: 1000,
		VelocityPriorKms: DefaultVelocityPriorKms, UnboundP: 0.8, MarginalP: 0.5, TraceMinP: 0.5, TraceSamples: 200, TraceMyr: 300,
		GCRadiusKpc: 1, DiskRadiusKpc: 25}
}

// DefaultGalaxy returns the Solar parameters used when [galaxy] omits them:
// R0 = 8.122 kpc (GRAVITY Collaboration 2018, A&A 615, L15), z_sun = 20.8
// pc (Bennett & Bovy 2019, MNRAS 482, 1417), (U, V, W) = (12.9, 245.6,
// 7.78) km/s (Drimmel & Poggio 2018, RNAAS 2, 210); taken from
// frames.DefaultSun so both packages agree.
func DefaultGalaxy() Galaxy {
	s := frames.DefaultSun()
	return Galaxy{SunDistanceKpc: s.DistanceKpc, SunHeightPc: s.HeightPc, SunVelocityKms: s.VelocityKms}
}

// Load reads and parses a campaign file.
func Load(path string) (*Campaign, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, &position.Error{File: path, Msg: err.Error(), Err: fmt.Errorf("%w: %w", ErrRead, err)}
	}
	dir, err := filepath.Abs(filepath.Dir(path))
	if err != nil {
		return nil, &position.Error{File: path, Msg: err.Error(), Err: fmt.Errorf("%w: %w", ErrRead, err)}
	}
	return Parse(path, data, dir)
}

// raw mirrors the file; pointers tell "absent" from zero.
type raw struct {
	Name                 *string     `toml:"name"`
	Seed                 *int64      `toml:"seed"`
	Ledger               *string     `toml:"ledger"`
	Rules                *string     `toml:"rules"`
	ParallaxZeroPointMas *float64    `toml:"parallax_zero_point_mas"`
	NullMarkers          *[]string   `toml:"null_markers"`
	Match                *rawMatch   `toml:"match"`
	Catalog              []rawCat    `toml:"catalog"`
	Galaxy               *rawGalaxy  `toml:"galaxy"`
	Potential            *rawPot     `toml:"potential"`
	Kinematics           *rawKinemat `toml:"kinematics"`
}

type rawMatch struct {
	RadiusArcsec          *float64 `toml:"radius_arcsec"`
	NSigma                *float64 `toml:"n_sigma"`
	RadiusFloorArcsec     *float64 `toml:"radius_floor_arcsec"`
	DuplicateRadiusArcsec *float64 `toml:"duplicate_radius_arcsec"`
	AmbiguityRatio        *float64 `toml:"ambiguity_ratio"`
}

type rawCat struct {
	Name           *string           `toml:"name"`
	File           *string           `toml:"file"`
	Role           *string           `toml:"role"`
	Epoch          *float64          `toml:"epoch"`
	Release        *string           `toml:"release"`
	PositionErrMas *float64          `toml:"position_err_mas"`
	NullMarkers    *[]string         `toml:"null_markers"`
	Columns        map[string]string `toml:"columns"`
	Units          map[string]string `toml:"units"`
}

type rawGalaxy struct {
	SunDistanceKpc *float64   `toml:"sun_distance_kpc"`
	SunHeightPc    *float64   `toml:"sun_height_pc"`
	SunVelocityKms *[]float64 `toml:"sun_velocity_kms"`
}

type rawPot struct {
	Model           *string   `toml:"model"`
	Component       []rawComp `toml:"component"`
	EscapeRadiusKpc *float64  `toml:"escape_radius_kpc"`
}

type rawComp struct {
	Kind     string  `toml:"kind"`
	MassMsun float64 `toml:"mass_msun"`
	ScaleKpc float64 `toml:"scale_kpc"`
	AKpc     float64 `toml:"a_kpc"`
	BKpc     float64 `toml:"b_kpc"`
}

type rawKinemat struct {
	Distance                *string  `toml:"distance"`
	EDSDLengthKpc           *float64 `toml:"edsd_length_kpc"`
	MinParallaxSignificance *float64 `toml:"min_parallax_significance"`
	Samples                 *int     `toml:"samples"`
	VelocityPriorKms        *float64 `toml:"velocity_prior_kms"`
	UnboundP                *float64 `toml:"unbound_p"`
	MarginalP               *float64 `toml:"marginal_p"`
	TraceMinP               *float64 `toml:"trace_min_p"`
	TraceSamples            *int     `toml:"trace_samples"`
	TraceMyr                *float64 `toml:"trace_myr"`
	GCRadiusKpc             *float64 `toml:"gc_radius_kpc"`
	DiskRadiusKpc           *float64 `toml:"disk_radius_kpc"`
}

var (
	catNameRE   = regexp.MustCompile(`^[a-z][a-z0-9_]*$`)
	tomlLineRE  = regexp.MustCompile(`^toml: line (\d+)(?: \(last key "([^"]*)"\))?`)
	validRoles  = []catalog.Role{catalog.Astrometry, catalog.Spectroscopy, catalog.Photometry}
	distMethods = []string{"auto", "inverse", "edsd", "catalog"}
)

// Parse parses campaign text. name is used in messages (usually the file
// path); dir is the absolute directory relative paths are resolved from.
// On error it returns position.Errors holding every problem found, in file
// order (problems without a place last), each wrapping one of the Err*
// sentinels, or a single *position.Error for text that is not TOML.
func Parse(name string, data []byte, dir string) (*Campaign, error) {
	text := string(data)
	var r raw
	md, err := toml.Decode(text, &r)
	if err != nil {
		return nil, syntaxError(name, text, err)
	}
	p := &parser{file: name, pos: tomlpos.Scan(text)}
	var reported []string
	for _, k := range md.Undecoded() {
		ks := k.String()
		inner := false // keys inside an unknown table add nothing
		for _, r := range reported {
			inner = inner || strings.HasPrefix(ks, r+".")
		}
		if inner {
			continue
		}
		reported = append(reported, ks)
		p.bad(p.pos.Near(k...), ks, ErrUnknownKey, "unknown key%s", retired.Hint(k[len(k)-1]))
	}
	c := p.build(&r, name, dir)
	if len(p.errs) > 0 {
		// File order; problems without a line (e.g. no astrometry catalog) last.
		sort.SliceStable(p.errs, func(i, j int) bool {
			li, lj := p.errs[i].Line, p.errs[j].Line
			return li != 0 && (lj == 0 || li < lj)
		})
		return nil, p.errs
	}
	return c, nil
}

// syntaxError places a decoding error: a syntax error carries its line and
// column; a value of the wrong type names only its line and key, and the
// column is the key's when the scan finds that key on that line.
func syntaxError(name, text string, err error) *position.Error {
	e := &position.Error{File: name, Msg: err.Error(), Err: fmt.Errorf("%w: %w", ErrSyntax, err)}
	if pe, ok := err.(toml.ParseError); ok {
		e.Line, e.Col, e.Msg = pe.Position.Line, pe.Position.Col, pe.Message
	} else if m := tomlLineRE.FindStringSubmatch(err.Error()); m != nil {
		e.Line, _ = strconv.Atoi(m[1])
		e.Msg = strings.TrimPrefix(strings.TrimPrefix(err.Error(), "toml: line "+m[1]), " ")
		if m[2] != "" {
			if at := tomlpos.Scan(text).Near(strings.Split(m[2], ".")...); at.Line == e.Line {
				e.Col = at.Col
			}
		}
	}
	return e
}

type parser struct {
	file string
	pos  *tomlpos.Map
	errs position.Errors
}

// bad records a problem with key (dotted, catalogs numbered from 1:
// "catalog[2].role") at p; the zero p means the problem has no one place.
func (p *parser) bad(at tomlpos.Pos, key string, sentinel error, format string, args ...any) {
	p.errs = append(p.errs, &position.Error{File: p.file, Line: at.Line, Col: at.Col, Name: key, What: key, Msg: fmt.Sprintf(format, args...), Err: sentinel})
}

// num checks a float key: finite, and above (or at) a lower limit.
func (p *parser) num(v float64, min float64, inclusive bool, key string, path ...string) {
	ok := !math.IsNaN(v) && !math.IsInf(v, 0) && (v > min || (inclusive && v == min))
	if !ok {
		op := ">"
		if inclusive {
			op = ">="
		}
		p.bad(p.pos.Near(path...), key, ErrBadValue, "must be a finite number %s %g, got %v", op, min, v)
	}
}

func (p *parser) build(r *raw, name, dir string) *Campaign {
	c := &Campaign{File: name, Dir: dir, Seed: DefaultSeed, Ledger: DefaultLedger, Rules: DefaultRules,
		NullMarkers: catalog.DefaultNullMarkers(), Galaxy: DefaultGalaxy(), Kinematics: DefaultKinematics()}
	p.topLevel(c, r, name, dir)
	p.match(c, r.Match)
	p.catalogs(c, r)
	p.galaxy(c, r.Galaxy)
	p.potential(c, r.Potential)
	p.kinematics(c, r.Kinematics)
	return c
}

// topLevel reads the keys outside any table.
func (p *parser) topLevel(c *Campaign, r *raw, name, dir string) {
	c.Name = strings.TrimSuffix(filepath.Base(name), filepath.Ext(name))
	if r.Name != nil {
		c.Name = *r.Name
	}
	if r.Seed != nil {
		c.Seed = *r.Seed
	}
	if r.Ledger != nil {
		c.Ledger = *r.Ledger
		if c.Ledger == "" {
			p.bad(p.pos.Near("ledger"), "ledger", ErrBadValue, "must not be empty")
		}
	}
	c.Ledger = resolve(dir, c.Ledger)
	if r.Rules != nil {
		c.Rules = *r.Rules
		if c.Rules == "" {
			p.bad(p.pos.Near("rules"), "rules", ErrBadValue, `must be "default" or a path`)
		}
	}
	if c.Rules != DefaultRules {
		c.Rules = resolve(dir, c.Rules)
	}
	if r.ParallaxZeroPointMas != nil {
		c.ParallaxZeroPointMas = *r.ParallaxZeroPointMas
		p.num(math.Abs(c.ParallaxZeroPointMas), 0, true, "parallax_zero_point_mas", "parallax_zero_point_mas")
	}
	if r.NullMarkers != nil {
		c.NullMarkers = *r.NullMarkers
	}
}

func resolve(dir, path string) string {
	if filepath.IsAbs(path) || path == "" {
		return path
	}
	return filepath.Join(dir, path)
}

func (p *parser) match(c *Campaign, m *rawMatch) {
	c.Match = Match{RadiusArcsec: DefaultRadiusArcsec, DuplicateRadiusArcsec: DefaultDuplicateRadiusArcsec, AmbiguityRatio: DefaultAmbiguityRatio}
	if m == nil {
		return
	}
	set := func(dst *float64, src *float64, key string, min float64, inclusive bool) {
		if src != nil {
			*dst = *src
			p.num(*src, min, inclusive, "match."+key, "match", key)
		}
	}
	set(&c.Match.RadiusArcsec, m.RadiusArcsec, "radius_arcsec", 0, false)
	set(&c.Match.NSigma, m.NSigma, "n_sigma", 0, true)
	set(&c.Match.DuplicateRadiusArcsec, m.DuplicateRadiusArcsec, "duplicate_radius_arcsec", 0, true)
	set(&c.Match.AmbiguityRatio, m.AmbiguityRatio, "ambiguity_ratio", 1, true)
	if m.RadiusFloorArcsec != nil {
		set(&c.Match.RadiusFloorArcsec, m.RadiusFloorArcsec, "radius_floor_arcsec", 0, true)
		if c.Match.NSigma == 0 {
			p.bad(p.pos.Near("match", "radius_floor_arcsec"), "match.radius_floor_arcsec", ErrBadValue, "has no effect unless n_sigma > 0")
		}
	} else if c.Match.NSigma > 0 {
		c.Match.RadiusFloorArcsec = DefaultRadiusFloorArcsec
	}
}

// catalogs checks every [[catalog]] table and that exactly one is the
// astrometry catalog.
func (p *parser) catalogs(c *Campaign, r *raw) {
	seen := make(map[string]int) // catalog name -> line of its first use
	astrometry := 0
	for i, rc := range r.Catalog {
		ct := catTable{parser: p, i: i, elem: tomlpos.Elem("catalog", i)}
		cs := CatalogSpec{Line: ct.at().Line}
		s := &cs.Spec
		ct.name(s, rc.Name, seen)
		ct.file(s, rc.File, c.Dir)
		if ct.role(s, rc.Role) && s.Role == catalog.Astrometry {
			astrometry++
			if astrometry == 2 {
				p.bad(ct.at("role"), ct.key("role"), ErrBadValue, "a second astrometry catalog; exactly one is allowed")
			}
		}
		ct.epoch(s, rc.Epoch)
		if rc.Release != nil {
			s.Release = *rc.Release
		}
		if rc.PositionErrMas != nil {
			s.PositionErrMas = *rc.PositionErrMas
			p.num(s.PositionErrMas, 0, true, ct.key("position_err_mas"), ct.elem, "position_err_mas")
		} else if s.Role != catalog.Astrometry {
			s.PositionErrMas = DefaultSecondaryPositionErrMas
		}
		// Never nil: an empty list means "only empty cells", not the defaults.
		s.NullMarkers = append(make([]string, 0, len(c.NullMarkers)), c.NullMarkers...)
		if rc.NullMarkers != nil {
			s.NullMarkers = append(make([]string, 0, len(*rc.NullMarkers)), *rc.NullMarkers...)
		}
		ct.columns(s, rc.Columns)
		ct.units(s, rc.Units)
		c.Catalogs = append(c.Catalogs, cs)
	}
	if astrometry == 0 {
		p.bad(tomlpos.Pos{}, "catalog", ErrBadValue, "no catalog has role = \"astrometry\"; exactly one is required")
	}
}

// catTable is the i-th (0-based) [[catalog]] table being checked.
type catTable struct {
	*parser
	i    int
	elem string // its path segment in the file, "catalog#i"
}

// at is the position of a key of the table, else of the table's header.
func (ct catTable) at(key ...string) tomlpos.Pos {
	return ct.pos.Near(append([]string{ct.elem}, key...)...)
}

// key names a key of the table as people read it, catalogs numbered from
// 1: "catalog[2].role".
func (ct catTable) key(k string) string { return fmt.Sprintf("catalog[%d].%s", ct.i+1, k) }

func (ct catTable) name(s *catalog.Spec, name *string, seen map[string]int) {
	if name == nil {
		ct.bad(ct.at(), ct.key("name"), ErrMissing, "is required")
		return
	}
	s.Name = *name
	if !catNameRE.MatchString(s.Name) {
		ct.bad(ct.at("name"), ct.key("name"), ErrBadValue, "%q must match [a-z][a-z0-9_]*", s.Name)
	} else if first, dup := seen[s.Name]; dup {
		ct.bad(ct.at("name"), ct.key("name"), ErrBadValue, "%q already used by the catalog on line %d", s.Name, first)
	} else {
		seen[s.Name] = ct.at("name").Line
	}
}

func (ct catTable) file(s *catalog.Spec, file *string, dir string) {
	if file == nil || *file == "" {
		ct.bad(ct.at(), ct.key("file"), ErrMissing, "is required")
		return
	}
	f := *file
	if !strings.HasSuffix(f, ".csv") && !strings.HasSuffix(f, ".csv.gz") {
		ct.bad(ct.at("file"), ct.key("file"), ErrBadValue, "%q must end in .csv or .csv.gz", f)
	}
	s.File = resolve(dir, f)
}

// role sets the catalog's role; it returns false when the role is absent.
func (ct catTable) role(s *catalog.Spec, role *string) bool {
	if role == nil {
		ct.bad(ct.at(), ct.key("role"), ErrMissing, "is required (astrometry, spectroscopy or photometry)")
		return false
	}
	s.Role = catalog.Role(*role)
	ok := false
	for _, v := range validRoles {
		ok = ok || v == s.Role
	}
	if !ok {
		ct.bad(ct.at("role"), ct.key("role"), ErrBadValue, "%q is not astrometry, spectroscopy or photometry", *role)
	}
	return true
}

func (ct catTable) epoch(s *catalog.Spec, epoch *float64) {
	if epoch == nil {
		ct.bad(ct.at(), ct.key("epoch"), ErrMissing, "is required (Julian year of the positions)")
		return
	}
	s.EpochJyr = *epoch
	if !(s.EpochJyr >= 1800 && s.EpochJyr <= 2200) {
		ct.bad(ct.at("epoch"), ct.key("epoch"), ErrBadValue, "%v is not a Julian year in [1800, 2200]", s.EpochJyr)
	}
}

// columns checks the map of canonical field -> column header.
func (ct catTable) columns(s *catalog.Spec, cols map[string]string) {
	s.Columns = make(map[string]string, len(cols))
	for f, h := range cols {
		fld, ok := catalog.FieldByName(f)
		switch {
		case !ok || !catalog.Mappable(fld):
			ct.bad(ct.at("columns", f), ct.key("columns."+f), ErrUnknownField, "%q is not a canonical field%s", f, retired.Hint(f))
		case h == "":
			ct.bad(ct.at("columns", f), ct.key("columns."+f), ErrBadValue, "empty column header")
		}
		s.Columns[f] = h
	}
}

// units checks the map of canonical field -> unit of the file.
func (ct catTable) units(s *catalog.Spec, units map[string]string) {
	s.Units = make(map[string]string, len(units))
	for f, u := range units {
		fld, ok := catalog.FieldByName(f)
		if !ok || !catalog.Mappable(fld) {
			ct.bad(ct.at("units", f), ct.key("units."+f), ErrUnknownField, "%q is not a canonical field%s", f, retired.Hint(f))
		} else if err := catalog.CheckUnit(fld, u); err != nil {
			ct.bad(ct.at("units", f), ct.key("units."+f), ErrBadUnit, "%v", err)
		}
		s.Units[f] = u
	}
	if d, e := s.Units["distance"], s.Units["distance_err"]; (e == "mag" && d != "mag") || (d == "mag" && e != "" && e != "mag") {
		ct.bad(ct.at("units"), ct.key("units"), ErrBadUnit, "distance and distance_err must both be in mag or neither (got %q and %q)", d, e)
	}
}

func (p *parser) galaxy(c *Campaign, g *rawGalaxy) {
	if g == nil {
		return
	}
	if g.SunDistanceKpc != nil {
		c.Galaxy.SunDistanceKpc = *g.SunDistanceKpc
		p.num(*g.SunDistanceKpc, 0, false, "galaxy.sun_distance_kpc", "galaxy", "sun_distance_kpc")
	}
	if g.SunHeightPc != nil {
		c.Galaxy.SunHeightPc = *g.SunHeightPc
		p.num(math.Abs(*g.SunHeightPc), 0, true, "galaxy.sun_height_pc", "galaxy", "sun_height_pc")
	}
	if g.SunVelocityKms != nil {
		v := *g.SunVelocityKms
		if len(v) != 3 {
			p.bad(p.pos.Near("galaxy", "sun_velocity_kms"), "galaxy.sun_velocity_kms", ErrBadValue, "needs 3 components (U, V, W), got %d", len(v))
			return
		}
		for i := range v {
			p.num(math.Abs(v[i]), 0, true, "galaxy.sun_velocity_kms", "galaxy", "sun_velocity_kms")
			c.Galaxy.SunVelocityKms[i] = v[i]
		}
	}
}

func (p *parser) potential(c *Campaign, rp *rawPot) {
	if rp == nil {
		return
	}
	if rp.EscapeRadiusKpc != nil {
		c.Potential.EscapeRadiusKpc = *rp.EscapeRadiusKpc
		p.num(*rp.EscapeRadiusKpc, 0, true, "potential.escape_radius_kpc", "potential", "escape_radius_kpc")
	}
	if rp.Model != nil {
		c.Potential.Model = *rp.Model
		if len(rp.Component) > 0 {
			p.bad(p.pos.Near("potential", "model"), "potential.model", ErrBadValue, "give either model or [[potential.component]] tables, not both")
		}
		if _, err := potential.Builtin(*rp.Model); err != nil {
			p.bad(p.pos.Near("potential", "model"), "potential.model", ErrBadValue, "%v", err)
		}
	}
	pcs := make([]potential.Component, len(rp.Component))
	for i, rc := range rp.Component {
		comp := Component(rc)
		c.Potential.Components = append(c.Potential.Components, comp)
		pcs[i] = potential.Component(comp)
	}
	if len(pcs) == 0 {
		return
	}
	if _, err := potential.New(pcs); err != nil {
		if ce, ok := err.(*potential.ComponentError); ok {
			at := p.pos.Near("potential", tomlpos.Elem("component", ce.Index), ce.Field)
			p.bad(at, fmt.Sprintf("potential.component[%d].%s", ce.Index+1, ce.Field), ErrBadValue, "%s", ce.Msg)
			return
		}
		p.bad(p.pos.Near("potential", "component"), "potential.component", ErrBadValue, "%v", err)
	}
}

func (p *parser) kinematics(c *Campaign, rk *rawKinemat) {
	if rk == nil {
		return
	}
	k := &c.Kinematics
	at := func(key string) tomlpos.Pos { return p.pos.Near("kinematics", key) }
	if rk.Distance != nil {
		k.Distance = *rk.Distance
		ok := false
		for _, m := range distMethods {
			ok = ok || m == k.Distance
		}
		if !ok {
			p.bad(at("distance"), "kinematics.distance", ErrBadValue, "%q is not one of %q", k.Distance, distMethods)
		}
	}
	f := func(dst *float64, src *float64, key string, min float64, inclusive bool) {
		if src != nil {
			*dst = *src
			p.num(*src, min, inclusive, "kinematics."+key, "kinematics", key)
		}
	}
	f(&k.EDSDLengthKpc, rk.EDSDLengthKpc, "edsd_length_kpc", 0, false)
	f(&k.MinParallaxSignificance, rk.MinParallaxSignificance, "min_parallax_significance", 0, false)
	f(&k.VelocityPriorKms, rk.VelocityPriorKms, "velocity_prior_kms", 0, true)
	f(&k.UnboundP, rk.UnboundP, "unbound_p", 0, true)
	f(&k.MarginalP, rk.MarginalP, "marginal_p", 0, true)
	f(&k.TraceMinP, rk.TraceMinP, "trace_min_p", 0, true)
	f(&k.TraceMyr, rk.TraceMyr, "trace_myr", 0, false)
	f(&k.GCRadiusKpc, rk.GCRadiusKpc, "gc_radius_kpc", 0, false)
	f(&k.DiskRadiusKpc, rk.DiskRadiusKpc, "disk_radius_kpc", 0, false)
	for _, pr := range []struct {
		key string
		v   float64
	}{{"unbound_p", k.UnboundP}, {"marginal_p", k.MarginalP}, {"trace_min_p", k.TraceMinP}} {
		if pr.v > 1 {
			p.bad(at(pr.key), "kinematics."+pr.key, ErrBadValue, "a probability must be <= 1, got %v", pr.v)
		}
	}
	if k.MarginalP > k.UnboundP {
		p.bad(at("marginal_p"), "kinematics.marginal_p", ErrBadValue, "must not exceed unbound_p (%v > %v)", k.MarginalP, k.UnboundP)
	}
	for _, n := range []struct {
		key string
		dst *int
		src *int
	}{{"samples", &k.Samples, rk.Samples}, {"trace_samples", &k.TraceSamples, rk.TraceSamples}} {
		if n.src != nil {
			*n.dst = *n.src
			if *n.src < 1 {
				p.bad(at(n.key), "kinematics."+n.key, ErrBadValue, "must be >= 1, got %d", *n.src)
			}
		}
	}
}

// Primary returns the astrometry catalog (Parse guarantees exactly one).
func (c *Campaign) Primary() *CatalogSpec {
	for i := range c.Catalogs {
		if c.Catalogs[i].Role == catalog.Astrometry {
			return &c.Catalogs[i]
		}
	}
	return nil
}

// Secondaries returns the other catalogs, in file order.
func (c *Campaign) Secondaries() []*CatalogSpec {
	var out []*CatalogSpec
	for i := range c.Catalogs {
		if c.Catalogs[i].Role != catalog.Astrometry {
			out = append(out, &c.Catalogs[i])
		}
	}
	return out
}
