package campaign

import (
	"fmt"
	"math"
	"reflect"
	"starvet/crossmatch"
	"starvet/galaxy/orbit"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"starvet/galaxy/frames"
)

// Names of recorded settings that readers of a ledger look up (report,
// why). A setting's name is its key in the campaign file, dotted with its
// table: [kinematics] unbound_p is kinematics.unbound_p.
const (
	SettingEscapeRadiusKpc  = "potential.escape_radius_kpc"
	SettingSunDistanceKpc   = "galaxy.sun_distance_kpc"
	SettingUnboundP         = "kinematics.unbound_p"
	SettingMarginalP        = "kinematics.marginal_p"
	SettingGCRadiusKpc      = "kinematics.gc_radius_kpc"
	SettingVelocityPriorKms = "kinematics.velocity_prior_kms"
	SettingTraceMyr         = "kinematics.trace_myr"
	// The potential the run used (a built-in model's name, or
	// ComponentsModel) and how many components it has; each component's
	// values are named by ComponentSetting.
	SettingPotentialModel      = "potential.model"
	SettingPotentialComponents = "potential.components"
	// SettingRulesFile is where the rule set was read from.
	SettingRulesFile = "rules.file"
)

// ComponentsModel is the model name of a potential built from the
// campaign's own [[potential.component]] tables.
const ComponentsModel = "campaign-components"

// ComponentSetting names a value of the potential's component number n
// (1-based, in the model's order), e.g. potential.component.1.mass_msun.
func ComponentSetting(n int, field string) string {
	return "potential.component." + strconv.Itoa(n) + "." + field
}

// CatalogSetting names a per-catalog setting, e.g.
// catalog.spec_a.position_err_mas.
func CatalogSetting(catalog, field string) string { return "catalog." + catalog + "." + field }

// settings is every campaign setting that holds one value: each is named,
// defaulted, bounded and explained here and nowhere else. Decoding,
// defaults, checks and Values all walk it. The meanings are those of
// db/SCHEMA.md's run_settings table (a test keeps the two equal).
var settings = []setting{
	integer("seed", func(c *Campaign) *int64 { return &c.Seed }, 1,
		"seed of the Monte Carlo random source [`seed`]"),
	number("parallax_zero_point_mas", func(c *Campaign) *float64 { return &c.ParallaxZeroPointMas }, 0, anySign,
		"parallax zero point subtracted from every parallax, mas [`parallax_zero_point_mas`]"),

	number("match.radius_arcsec", func(c *Campaign) *float64 { return &c.Match.RadiusArcsec }, crossmatch.DefaultRadiusArcsec, positive,
		"cross-match search radius, arcsec [`match.radius_arcsec`]"),
	number("match.n_sigma", func(c *Campaign) *float64 { return &c.Match.NSigma }, 0, nonNegative,
		"when > 0, the radius is this many combined positional errors [`match.n_sigma`]"),
	// Without n_sigma > 0 it does nothing; with it, it defaults to
	// DefaultRadiusFloorArcsec (Parse).
	number("match.radius_floor_arcsec", func(c *Campaign) *float64 { return &c.Match.RadiusFloorArcsec }, 0, nonNegative,
		"lower limit of that radius, arcsec [`match.radius_floor_arcsec`]"),
	number("match.duplicate_radius_arcsec", func(c *Campaign) *float64 { return &c.Match.DuplicateRadiusArcsec }, 0.4, nonNegative,
		"radius within which rows of the primary catalog are duplicates, arcsec [`match.duplicate_radius_arcsec`]"),
	number("match.ambiguity_ratio", func(c *Campaign) *float64 { return &c.Match.AmbiguityRatio }, crossmatch.DefaultAmbiguityRatio, atLeastOne,
		"a match is ambiguous when another candidate (or another primary star's claim on the same counterpart) comes within this factor of the best one's match odds [`match.ambiguity_ratio`]"),

	// The Solar defaults are frames.DefaultSun: R0 = 8.122 kpc (GRAVITY
	// Collaboration 2018, A&A 615, L15), z_sun = 20.8 pc (Bennett & Bovy
	// 2019, MNRAS 482, 1417), (U, V, W) = (12.9, 245.6, 7.78) km/s (Drimmel
	// & Poggio 2018, RNAAS 2, 210).
	number("galaxy.sun_distance_kpc", func(c *Campaign) *float64 { return &c.Galaxy.SunDistanceKpc }, frames.DefaultSun().DistanceKpc, positive,
		"distance of the Sun from the Galactic Centre, kpc [`galaxy.sun_distance_kpc`]"),
	number("galaxy.sun_height_pc", func(c *Campaign) *float64 { return &c.Galaxy.SunHeightPc }, frames.DefaultSun().HeightPc, anySign,
		"height of the Sun above the plane, pc [`galaxy.sun_height_pc`]"),
	triple("galaxy.sun_velocity_kms", func(c *Campaign) *[3]float64 { return &c.Galaxy.SunVelocityKms }, frames.DefaultSun().VelocityKms, anySign,
		[3]string{"galaxy.sun_velocity_u_kms", "galaxy.sun_velocity_v_kms", "galaxy.sun_velocity_w_kms"},
		"the Sun's Galactocentric velocity (U, V, W), km/s [`galaxy.sun_velocity_kms`]"),

	number(SettingEscapeRadiusKpc, func(c *Campaign) *float64 { return &c.Potential.EscapeRadiusKpc }, 0, nonNegative,
		"radius the escape speed escapes to, kpc; 0 = infinity [`potential.escape_radius_kpc`]"),

	// The [kinematics] defaults are our choices.
	choice("kinematics.distance", func(c *Campaign) *string { return &c.Kinematics.Distance }, "auto", distMethods,
		"distance method: `auto`, `inverse`, `edsd` or `catalog` [`kinematics.distance`]"),
	number("kinematics.edsd_length_kpc", func(c *Campaign) *float64 { return &c.Kinematics.EDSDLengthKpc }, 1.35, positive,
		"length scale of the exponentially decreasing space density prior, kpc"),
	number("kinematics.min_parallax_significance", func(c *Campaign) *float64 { return &c.Kinematics.MinParallaxSignificance }, 5, positive,
		"least parallax over its error for a parallax distance"),
	count("kinematics.samples", func(c *Campaign) *int { return &c.Kinematics.Samples }, 1000,
		"Monte Carlo samples per star"),
	// 150 km/s is wider than the stellar halo's velocity ellipsoid in every
	// direction (sigma_r, sigma_phi, sigma_theta about 141, 75 and 85 km/s
	// near the Sun, Bond et al. 2010, ApJ 716, 1, from memory), so the
	// prior only bites where the measurement errors are larger than the
	// halo's own spread. The value is our choice.
	number(SettingVelocityPriorKms, func(c *Campaign) *float64 { return &c.Kinematics.VelocityPriorKms }, 150, nonNegative,
		"dispersion of the velocity prior, km/s; 0 = flat prior"),
	number(SettingUnboundP, func(c *Campaign) *float64 { return &c.Kinematics.UnboundP }, 0.8, probability,
		"a star is `unbound` when `p_unbound` ≥ this"),
	number(SettingMarginalP, func(c *Campaign) *float64 { return &c.Kinematics.MarginalP }, 0.5, probability,
		"a star is `marginal` when `p_unbound` ≥ this (and below `unbound_p`)"),
	// 5 sigma: a stopped star would have changed status under the full
	// draws with a probability of about 3e-7 per look (one-sided normal
	// tail, common practice for a "certain" decision). Our choice.
	number("kinematics.stop_sigma", func(c *Campaign) *float64 { return &c.Kinematics.StopSigma }, 5, nonNegative,
		"confidence, in one-sided Gaussian sigma, with which a star's Monte Carlo may end before `samples` draws because no further draws could change its status; 0 = every star gets all `samples`"),
	// Three quarters of the escape speed is about 400 km/s near the Sun,
	// where the fast stars of interest begin. Half, as first proposed,
	// keeps most disk stars (Galactocentric speeds near 240 km/s) at full
	// draws: 64% of the bound stars of BenchmarkRun1M. Our choice.
	number("kinematics.stop_tail_vesc_fraction", func(c *Campaign) *float64 { return &c.Kinematics.StopTailVEscFraction }, 0.75, positive,
		"a star whose speed's 84th percentile could exceed this fraction of its escape speed always gets all `samples`"),
	number("kinematics.trace_min_p", func(c *Campaign) *float64 { return &c.Kinematics.TraceMinP }, 0.5, probability,
		"least `p_unbound` for a star's orbit to be traced back"),
	count("kinematics.trace_samples", func(c *Campaign) *int { return &c.Kinematics.TraceSamples }, 200,
		"samples traced back per star (and kept as `crossings`)"),
	number(SettingTraceMyr, func(c *Campaign) *float64 { return &c.Kinematics.TraceMyr }, orbit.DefaultTraceMyr, positive,
		"how far back orbits are traced, Myr"),
	number(SettingGCRadiusKpc, func(c *Campaign) *float64 { return &c.Kinematics.GCRadiusKpc }, orbit.DefaultGCRadiusKpc, positive,
		"plane crossings this close to the Galactic Centre count as a centre origin, kpc"),
	number("kinematics.disk_radius_kpc", func(c *Campaign) *float64 { return &c.Kinematics.DiskRadiusKpc }, orbit.DefaultDiskRadiusKpc, positive,
		"crossings inside this radius (the centre excluded) make a disc origin, beyond it an outer one, kpc"),
}

// setting is one entry of the table. name is the key's path in the file,
// dotted, and the name the ledger records the value under.
type setting struct {
	name  string
	about string // one line, as in db/SCHEMA.md
	typ   reflect.Type
	reset func(*Campaign)
	// set stores the file's value (of type typ) and returns its problems.
	set    func(*Campaign, any) []string
	values func(*Campaign) []NameValue
	// value is the campaign's value as the file writes it (typ).
	value func(*Campaign) any
}

// NameValue is one recorded setting; numbers are the shortest text that
// reads back as the same value.
type NameValue struct {
	Name  string
	Value string
}

func formatFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// limit bounds a number: finite, and above (or at) min.
type limit struct {
	min       float64
	inclusive bool // min itself is allowed
	abs       bool // the bound is on |v|: either sign
	atMostOne bool // a probability
}

var (
	positive    = limit{}
	nonNegative = limit{inclusive: true}
	anySign     = limit{inclusive: true, abs: true}
	atLeastOne  = limit{min: 1, inclusive: true}
	probability = limit{inclusive: true, atMostOne: true}
)

func (l limit) problems(v float64) []string {
	var out []string
	x := v
	if l.abs {
		x = math.Abs(v)
	}
	if math.IsNaN(x) || math.IsInf(x, 0) || !(x > l.min || (l.inclusive && x == l.min)) {
		op := ">"
		if l.inclusive {
			op = ">="
		}
		out = append(out, fmt.Sprintf("must be a finite number %s %g, got %v", op, l.min, x))
	}
	if l.atMostOne && v > 1 {
		out = append(out, fmt.Sprintf("a probability must be <= 1, got %v", v))
	}
	return out
}

func number(name string, field func(*Campaign) *float64, def float64, l limit, about string) setting {
	return setting{name: name, about: about, typ: reflect.TypeFor[float64](),
		reset: func(c *Campaign) { *field(c) = def },
		set: func(c *Campaign, v any) []string {
			*field(c) = v.(float64)
			return l.problems(v.(float64))
		},
		values: func(c *Campaign) []NameValue { return []NameValue{{name, formatFloat(*field(c))}} },
		value:  func(c *Campaign) any { return *field(c) }}
}

// count is a whole number >= 1.
func count(name string, field func(*Campaign) *int, def int, about string) setting {
	return setting{name: name, about: about, typ: reflect.TypeFor[int](),
		reset: func(c *Campaign) { *field(c) = def },
		set: func(c *Campaign, v any) []string {
			if *field(c) = v.(int); v.(int) < 1 {
				return []string{fmt.Sprintf("must be >= 1, got %d", v.(int))}
			}
			return nil
		},
		values: func(c *Campaign) []NameValue { return []NameValue{{name, strconv.Itoa(*field(c))}} },
		value:  func(c *Campaign) any { return *field(c) }}
}

// integer is any whole number.
func integer(name string, field func(*Campaign) *int64, def int64, about string) setting {
	return setting{name: name, about: about, typ: reflect.TypeFor[int64](),
		reset: func(c *Campaign) { *field(c) = def },
		set: func(c *Campaign, v any) []string {
			*field(c) = v.(int64)
			return nil
		},
		values: func(c *Campaign) []NameValue { return []NameValue{{name, strconv.FormatInt(*field(c), 10)}} },
		value:  func(c *Campaign) any { return *field(c) }}
}

func choice(name string, field func(*Campaign) *string, def string, options []string, about string) setting {
	return setting{name: name, about: about, typ: reflect.TypeFor[string](),
		reset: func(c *Campaign) { *field(c) = def },
		set: func(c *Campaign, v any) []string {
			s := v.(string)
			*field(c) = s
			for _, o := range options {
				if o == s {
					return nil
				}
			}
			return []string{fmt.Sprintf("%q is not one of %q", s, options)}
		},
		values: func(c *Campaign) []NameValue { return []NameValue{{name, *field(c)}} },
		value:  func(c *Campaign) any { return *field(c) }}
}

// triple is three numbers, written as an array and recorded one by one.
func triple(name string, field func(*Campaign) *[3]float64, def [3]float64, l limit, recorded [3]string, about string) setting {
	return setting{name: name, about: about, typ: reflect.TypeFor[[]float64](),
		reset: func(c *Campaign) { *field(c) = def },
		set: func(c *Campaign, v any) []string {
			xs := v.([]float64)
			if len(xs) != 3 {
				return []string{fmt.Sprintf("needs 3 components (U, V, W), got %d", len(xs))}
			}
			var out []string
			for i, x := range xs {
				out = append(out, l.problems(x)...)
				field(c)[i] = x
			}
			return out
		},
		values: func(c *Campaign) []NameValue {
			v := *field(c)
			return []NameValue{{recorded[0], formatFloat(v[0])}, {recorded[1], formatFloat(v[1])}, {recorded[2], formatFloat(v[2])}}
		},
		value: func(c *Campaign) any { v := *field(c); return v[:] }}
}

// path is the setting's key path in the file: its table (if any) and key.
func (s setting) path() []string { return strings.Split(s.name, ".") }

// decodeSettings decodes the table's settings from the file text into a
// struct built from the table (one pointer per setting, so an absent key
// stays nil), letting the TOML decoder check types as for hand-written
// fields. It returns the values the file gives, by setting.
func decodeSettings(text string) (map[string]any, toml.MetaData, error) {
	var top []reflect.StructField
	tables := map[string][]reflect.StructField{}
	var order []string
	for i, s := range settings {
		p := s.path()
		f := reflect.StructField{Name: fmt.Sprintf("S%d", i), Type: reflect.PointerTo(s.typ), Tag: reflect.StructTag(`toml:"` + p[len(p)-1] + `"`)}
		if len(p) == 1 {
			top = append(top, f)
			continue
		}
		if _, ok := tables[p[0]]; !ok {
			order = append(order, p[0])
		}
		tables[p[0]] = append(tables[p[0]], f)
	}
	for i, t := range order {
		top = append(top, reflect.StructField{Name: fmt.Sprintf("T%d", i), Type: reflect.PointerTo(reflect.StructOf(tables[t])), Tag: reflect.StructTag(`toml:"` + t + `"`)})
	}
	v := reflect.New(reflect.StructOf(top))
	md, err := toml.Decode(text, v.Interface())
	if err != nil {
		return nil, md, err
	}
	got := map[string]any{}
	var collect func(v reflect.Value)
	collect = func(v reflect.Value) {
		for i := range v.NumField() {
			f, name := v.Field(i), v.Type().Field(i).Name
			if f.IsNil() {
				continue
			}
			if name[0] == 'T' {
				collect(f.Elem())
				continue
			}
			n, _ := strconv.Atoi(name[1:])
			got[settings[n].name] = f.Elem().Interface()
		}
	}
	collect(v.Elem())
	return got, md, nil
}

// Values returns what the ledger records of the campaign: every setting of
// the table and each catalog's positional error.
func (c *Campaign) Values() []NameValue {
	var out []NameValue
	for _, s := range settings {
		out = append(out, s.values(c)...)
	}
	for _, cat := range c.Catalogs {
		out = append(out, NameValue{CatalogSetting(cat.Name, "position_err_mas"), formatFloat(cat.PositionErrMas)})
	}
	return out
}
