package campaign

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"slices"
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
	// Tile is set for one sky tile's campaign, written by a split
	// (package tiling); nil for a whole campaign.
	Tile *Tile
	// Slurm holds the batch options for running the campaign's tiles on a
	// cluster ([slurm]); they change no result and enter no fingerprint.
	Slurm Slurm
}

// Slurm is the [slurm] table: options of the job array that runs a split
// campaign's tiles (starvet dispatch --executor slurm; its flags win).
type Slurm struct {
	Partition    string `toml:"partition"`
	Account      string `toml:"account"`
	Time         string `toml:"time"` // per array task, e.g. "02:00:00"
	Mem          string `toml:"mem"`  // per array task, e.g. "8G"
	TilesPerTask int    `toml:"tiles_per_task"`
	MaxRunning   int    `toml:"max_running"`
}

// Tile says which part of a split campaign a tile's campaign is. Its
// catalogs are shards holding the tile's own primaries plus a margin of
// rows of every catalog around it.
type Tile struct {
	Order int    // HEALPix order of the tiles (nested scheme)
	Pixel uint64 // the tile's pixel: it owns the primaries whose position lies in it
	// Unplaced: the tile also owns the primaries without a position.
	Unplaced bool
	// FineOrder and InnerArcsec define a shard row's inner test: a row is
	// inner when a pixel at FineOrder whose centre lies within InnerArcsec
	// plus that order's pixel bound of the row belongs to the tile
	// (see package tiling).
	FineOrder   int
	InnerArcsec float64
	// Prior is each secondary catalog's prior match probability over the
	// whole catalogs, by catalog name.
	Prior map[string]float64
	// Plan is the fingerprint of the split that wrote the tile.
	Plan string
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

// Kinematics holds the distance and Monte Carlo settings. Each field's
// key, default, bound and meaning are in the settings table (settings.go).
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
	// StopSigma is the confidence, in one-sided Gaussian sigma, with which
	// a star's Monte Carlo may end before Samples draws: when p_unbound is
	// below both MarginalP and TraceMinP at that confidence, and the star's
	// speed is far from the escape speed (StopTailVEscFraction). 0 gives
	// every star all Samples draws.
	StopSigma            float64
	StopTailVEscFraction float64
	TraceSamples         int
	TraceMyr             float64
	GCRadiusKpc          float64
	DiskRadiusKpc        float64
}

// Defaults of settings outside the settings table (settings.go).
const (
	DefaultLedger = "starvet.db"
	DefaultRules  = "default"
	// DefaultRadiusFloorArcsec is match.radius_floor_arcsec when n_sigma > 0.
	DefaultRadiusFloorArcsec = 0.5
	// DefaultSecondaryPositionErrMas is the positional error assumed for a
	// spectroscopic or photometric catalog that gives none (our choice,
	// typical of fibre/slit positions); the astrometric catalog gets no
	// fallback unless position_err_mas is set.
	DefaultSecondaryPositionErrMas = 100.0
)

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

// raw mirrors the keys of the file that are not in the settings table;
// pointers tell "absent" from zero.
type raw struct {
	Name        *string   `toml:"name"`
	Ledger      *string   `toml:"ledger"`
	Rules       *string   `toml:"rules"`
	NullMarkers *[]string `toml:"null_markers"`
	Catalog     []rawCat  `toml:"catalog"`
	Potential   *rawPot   `toml:"potential"`
	Tile        *rawTile  `toml:"tile"`
	Slurm       *Slurm    `toml:"slurm"`
}

type rawTile struct {
	Order       *int               `toml:"order"`
	Pixel       *int64             `toml:"pixel"`
	FineOrder   *int               `toml:"fine_order"`
	InnerArcsec *float64           `toml:"inner_arcsec"`
	Unplaced    bool               `toml:"unplaced"`
	Plan        string             `toml:"plan"`
	Prior       map[string]float64 `toml:"prior"`
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
	Format         *string           `toml:"format"`
	HDU            *tomlScalar       `toml:"hdu"`
	Table          *tomlScalar       `toml:"table"`
	Delimiter      *string           `toml:"delimiter"`
}

type rawPot struct {
	Model     *string   `toml:"model"`
	Component []rawComp `toml:"component"`
}

type rawComp struct {
	Kind     string  `toml:"kind"`
	MassMsun float64 `toml:"mass_msun"`
	ScaleKpc float64 `toml:"scale_kpc"`
	AKpc     float64 `toml:"a_kpc"`
	BKpc     float64 `toml:"b_kpc"`
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
	given, mdSettings, err := decodeSettings(text)
	if err != nil {
		return nil, syntaxError(name, text, err)
	}
	// A key is unknown when neither decoding took it.
	undecoded := map[string]bool{}
	for _, k := range mdSettings.Undecoded() {
		undecoded[k.String()] = true
	}
	p := &parser{file: name, pos: tomlpos.Scan(text)}
	var reported []string
	for _, k := range md.Undecoded() {
		ks := k.String()
		if !undecoded[ks] {
			continue
		}
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
	c := p.build(&r, given, name, dir)
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

func (p *parser) build(r *raw, given map[string]any, name, dir string) *Campaign {
	c := &Campaign{File: name, Dir: dir, Ledger: DefaultLedger, Rules: DefaultRules, NullMarkers: catalog.DefaultNullMarkers()}
	p.settings(c, given)
	p.topLevel(c, r, name, dir)
	p.match(c, given)
	p.catalogs(c, r)
	p.potential(c, r.Potential)
	p.kinematics(c)
	p.tile(c, r.Tile)
	if r.Slurm != nil {
		c.Slurm = *r.Slurm
		if c.Slurm.TilesPerTask < 0 || c.Slurm.MaxRunning < 0 {
			p.bad(p.pos.Near("slurm"), "slurm", ErrBadValue, "tiles_per_task and max_running must be >= 0")
		}
	}
	return c
}

// tile reads the [tile] table of a tile's campaign.
func (p *parser) tile(c *Campaign, rt *rawTile) {
	if rt == nil {
		return
	}
	if rt.Order == nil || rt.Pixel == nil || rt.FineOrder == nil || rt.InnerArcsec == nil || rt.Plan == "" {
		p.bad(p.pos.Near("tile"), "tile", ErrBadValue, "a [tile] table needs order, pixel, fine_order, inner_arcsec and plan")
		return
	}
	t := &Tile{Order: *rt.Order, FineOrder: *rt.FineOrder, InnerArcsec: *rt.InnerArcsec, Unplaced: rt.Unplaced, Plan: rt.Plan, Prior: rt.Prior}
	const maxOrder = 29
	if t.Order < 0 || t.Order > maxOrder {
		p.bad(p.pos.Near("tile", "order"), "tile.order", ErrBadValue, "%d is outside 0..%d", t.Order, maxOrder)
		return
	}
	if t.FineOrder < t.Order || t.FineOrder > maxOrder {
		p.bad(p.pos.Near("tile", "fine_order"), "tile.fine_order", ErrBadValue, "%d is outside %d..%d", t.FineOrder, t.Order, maxOrder)
	}
	if *rt.Pixel < 0 || uint64(*rt.Pixel) >= 12<<(2*uint(t.Order)) {
		p.bad(p.pos.Near("tile", "pixel"), "tile.pixel", ErrBadValue, "%d is not a pixel of order %d", *rt.Pixel, t.Order)
	}
	t.Pixel = uint64(*rt.Pixel)
	if !(t.InnerArcsec >= 0) {
		p.bad(p.pos.Near("tile", "inner_arcsec"), "tile.inner_arcsec", ErrBadValue, "must be >= 0")
	}
	for _, cs := range c.Catalogs {
		if cs.Role == catalog.Astrometry {
			continue
		}
		if v, ok := t.Prior[cs.Name]; !ok || !(v > 0 && v <= 1) {
			p.bad(p.pos.Near("tile", "prior"), "tile.prior."+cs.Name, ErrBadValue, "catalog %s needs a prior in (0, 1]", cs.Name)
		}
	}
	c.Tile = t
}

// settings fills in the table's settings: the file's value, else the
// default.
func (p *parser) settings(c *Campaign, given map[string]any) {
	for _, s := range settings {
		s.reset(c)
		if v, ok := given[s.name]; ok {
			for _, problem := range s.set(c, v) {
				p.bad(p.pos.Near(s.path()...), s.name, ErrBadValue, "%s", problem)
			}
		}
	}
}

// topLevel reads the keys outside any table.
func (p *parser) topLevel(c *Campaign, r *raw, name, dir string) {
	c.Name = strings.TrimSuffix(filepath.Base(name), filepath.Ext(name))
	if r.Name != nil {
		c.Name = *r.Name
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

// match applies the radius floor's rule: it only acts with n_sigma > 0,
// and then defaults to DefaultRadiusFloorArcsec.
func (p *parser) match(c *Campaign, given map[string]any) {
	const floor = "match.radius_floor_arcsec"
	if _, ok := given[floor]; ok {
		if c.Match.NSigma == 0 {
			p.bad(p.pos.Near("match", "radius_floor_arcsec"), floor, ErrBadValue, "has no effect unless n_sigma > 0")
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
		ct.format(s, rc)
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
			for _, problem := range nonNegative.problems(s.PositionErrMas) {
				p.bad(ct.at("position_err_mas"), ct.key("position_err_mas"), ErrBadValue, "%s", problem)
			}
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
	s.File = resolve(dir, *file)
}

// format checks the file's format (by the `format` key, else the file
// name's ending) and the keys that only one format takes.
func (ct catTable) format(s *catalog.Spec, rc rawCat) {
	if rc.Format != nil {
		s.Format = *rc.Format
	}
	if s.File == "" {
		return
	}
	format, err := catalog.FormatOf(s.File, s.Format)
	if err != nil {
		k := "file"
		if rc.Format != nil {
			k = "format"
		}
		ct.bad(ct.at(k), ct.key(k), ErrBadValue, "%v", err)
		return
	}
	only := func(key string, set bool, formats ...string) {
		if set && !slices.Contains(formats, format) {
			ct.bad(ct.at(key), ct.key(key), ErrBadValue, "applies to %s files only; this file is %s", strings.Join(formats, " and "), format)
		}
	}
	if rc.HDU != nil {
		s.HDU = rc.HDU.text
	}
	only("hdu", rc.HDU != nil, catalog.FormatFITS)
	if rc.Table != nil {
		s.Table = rc.Table.text
	}
	only("table", rc.Table != nil, catalog.FormatVOTable)
	if rc.Delimiter != nil {
		s.Delimiter = *rc.Delimiter
		if !slices.Contains(delimiters, s.Delimiter) {
			ct.bad(ct.at("delimiter"), ct.key("delimiter"), ErrBadValue, "%q is not one of \",\" \";\" \"\\t\" \" \" (whitespace)", s.Delimiter)
		}
	}
	only("delimiter", rc.Delimiter != nil, catalog.FormatCSV, catalog.FormatECSV)
}

// delimiters are the field separators of delimited text a campaign may name.
var delimiters = []string{",", ";", "\t", " "}

// tomlScalar is a key that may be written as a number or a string (an HDU
// number or EXTNAME, a table number or name); text is its value as text.
type tomlScalar struct{ text string }

func (t *tomlScalar) UnmarshalTOML(v any) error {
	switch x := v.(type) {
	case string:
		t.text = x
	case int64:
		t.text = strconv.FormatInt(x, 10)
	default:
		return fmt.Errorf("want a number or a name, got %T", v)
	}
	return nil
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
		if f, _ := catalog.FormatOf(s.File, s.Format); f == catalog.FormatVOTable {
			return // the file's COOSYS may say; ingest fails when it does not
		}
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

func (p *parser) potential(c *Campaign, rp *rawPot) {
	if rp == nil {
		return
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

// kinematics checks the thresholds against each other.
func (p *parser) kinematics(c *Campaign) {
	if k := c.Kinematics; k.MarginalP > k.UnboundP {
		p.bad(p.pos.Near("kinematics", "marginal_p"), SettingMarginalP, ErrBadValue, "must not exceed unbound_p (%v > %v)", k.MarginalP, k.UnboundP)
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
