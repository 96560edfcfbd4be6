package catalog

// Field identifies a canonical column. Every number held in a Table is in
// the canonical unit listed in Fields, whatever the unit of the source file.
type Field int

// Canonical fields. ID is text and lives in Table.IDs; the others are float64
// columns in Table.Cols.
const (
	ID Field = iota
	RA
	Dec
	RAErr
	DecErr
	Parallax
	ParallaxErr
	PMRA
	PMRAErr
	PMDec
	PMDecErr
	CorrRADec
	CorrParallaxPMRA
	CorrParallaxPMDec
	CorrPMRAPMDec
	RV
	RVErr
	Distance
	DistanceErr
	FitResidual
	ExcessNoise
	ExcessNoiseSig
	FitVisits
	DuplicateFlag
	Mag
	Color
	SNR
	// DistMod and DistModErr are filled only when a catalog gives its
	// independent distance as a distance modulus (unit "mag"); Distance and
	// DistanceErr then hold the converted kpc values as well. They cannot be
	// mapped directly from a campaign file.
	DistMod
	DistModErr
	NumFields
)

// FieldInfo describes one canonical field.
type FieldInfo struct {
	Name string // canonical name, as written in campaign files and rule expressions
	Unit string // canonical unit ("" for dimensionless, "text" for ID)
	Doc  string
}

// Fields is indexed by Field.
var Fields = [NumFields]FieldInfo{
	ID:                {"id", "text", "source identifier, unique within its catalog"},
	RA:                {"ra", "deg", "right ascension, ICRS, at the catalog epoch"},
	Dec:               {"dec", "deg", "declination, ICRS, at the catalog epoch"},
	RAErr:             {"ra_err", "mas", "uncertainty of ra times cos(dec)"},
	DecErr:            {"dec_err", "mas", "uncertainty of dec"},
	Parallax:          {"parallax", "mas", "trigonometric parallax"},
	ParallaxErr:       {"parallax_err", "mas", "uncertainty of parallax"},
	PMRA:              {"pm_ra", "mas/yr", "proper motion in ra, mu_alpha* = mu_alpha cos(dec)"},
	PMRAErr:           {"pm_ra_err", "mas/yr", "uncertainty of pm_ra"},
	PMDec:             {"pm_dec", "mas/yr", "proper motion in dec"},
	PMDecErr:          {"pm_dec_err", "mas/yr", "uncertainty of pm_dec"},
	CorrRADec:         {"corr_ra_dec", "", "correlation of ra and dec"},
	CorrParallaxPMRA:  {"corr_parallax_pm_ra", "", "correlation of parallax and pm_ra"},
	CorrParallaxPMDec: {"corr_parallax_pm_dec", "", "correlation of parallax and pm_dec"},
	CorrPMRAPMDec:     {"corr_pm_ra_pm_dec", "", "correlation of pm_ra and pm_dec"},
	RV:                {"rv", "km/s", "heliocentric radial velocity"},
	RVErr:             {"rv_err", "km/s", "uncertainty of rv"},
	Distance:          {"distance", "kpc", "independent (e.g. spectrophotometric) heliocentric distance"},
	DistanceErr:       {"distance_err", "kpc", "uncertainty of distance"},
	FitResidual:       {"fit_residual", "", "renormalised unit-weight error of the astrometric fit"},
	ExcessNoise:       {"excess_noise", "mas", "astrometric excess noise"},
	ExcessNoiseSig:    {"excess_noise_sig", "", "significance of the excess noise"},
	FitVisits:         {"fit_visits", "", "number of separate visit groups used in the astrometric fit"},
	DuplicateFlag:     {"duplicate_flag", "", "catalog's own duplicated-source flag (0 or 1)"},
	Mag:               {"mag", "mag", "apparent magnitude"},
	Color:             {"color", "mag", "colour index"},
	SNR:               {"snr", "", "spectrum signal-to-noise ratio"},
	DistMod:           {"distance_modulus", "mag", "distance modulus, when the catalog gives one"},
	DistModErr:        {"distance_modulus_err", "mag", "uncertainty of the distance modulus"},
}

// Role says what a catalog contributes to a campaign.
type Role string

const (
	Astrometry   Role = "astrometry" // the primary catalog; exactly one per campaign
	Spectroscopy Role = "spectroscopy"
	Photometry   Role = "photometry"
)

// Table is an ingested catalog held column by column. Row i of every column
// describes the source IDs[i]; a missing value is NaN. A column the catalog
// does not provide is nil.
type Table struct {
	Name     string
	Release  string
	Role     Role
	EpochJyr float64 // Julian year of the positions
	IDs      []string
	Lines    []int // 1-based line of each kept row in the source file
	Cols     [NumFields][]float64
}

// Len returns the number of rows.
func (t *Table) Len() int { return len(t.IDs) }

// Col returns a column, or nil when the catalog does not provide it.
func (t *Table) Col(f Field) []float64 { return t.Cols[f] }
