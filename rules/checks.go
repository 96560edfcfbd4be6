package rules

import "starvet/catalog"

// Check names a built-in test. An empty Check means an expression rule.
type Check string

// Built-in checks. Each takes the parameters listed in checkSpecs.
const (
	AtLeast              Check = "at_least"              // field >= limit
	AtMost               Check = "at_most"               // field <= limit
	ParallaxSignificance Check = "parallax_significance" // (parallax - zero point)/parallax_err >= limit
	FitResidual          Check = "fit_residual"          // fit_residual <= limit
	ExcessNoiseSig       Check = "excess_noise_significance"
	FitVisits            Check = "fit_visits"      // fit_visits >= limit
	Duplicate            Check = "duplicate"       // duplicate_flag != 1 and dup_count == 0
	MatchQuality         Check = "match"           // per secondary catalog
	RVPrecision          Check = "rv_precision"    // rv_err <= limit (km/s)
	SpectrumSNR          Check = "spectrum_snr"    // snr >= limit
	RequiredFields       Check = "required_fields" // every listed field present
)

// Direction says which side of Limit passes.
type Direction int

const (
	NoLimit Direction = iota
	Min               // value >= Limit passes
	Max               // value <= Limit passes
)

type paramKind int

const (
	kindNumber paramKind = iota
	kindBool
	kindField
	kindFieldList
	kindCatalog
)

func (k paramKind) String() string {
	switch k {
	case kindNumber:
		return "a number"
	case kindBool:
		return "true or false"
	case kindField:
		return "a field name (string)"
	case kindFieldList:
		return "a list of field names"
	case kindCatalog:
		return `a catalog name or "*" (string)`
	}
	return "?"
}

type paramSpec struct {
	key      string
	kind     paramKind
	required bool
}

type checkSpec struct {
	dir    Direction
	field  catalog.Field // the field a fixed check reads; -1 when it takes "field" or none
	params []paramSpec
	doc    string
}

var limitParam = paramSpec{"limit", kindNumber, true}

var checkSpecs = map[Check]checkSpec{
	AtLeast:              {Min, -1, []paramSpec{{"field", kindField, true}, limitParam}, "field >= limit"},
	AtMost:               {Max, -1, []paramSpec{{"field", kindField, true}, limitParam}, "field <= limit"},
	ParallaxSignificance: {Min, catalog.Parallax, []paramSpec{limitParam}, "(parallax - zero point)/parallax_err >= limit"},
	FitResidual:          {Max, catalog.FitResidual, []paramSpec{limitParam}, "fit_residual <= limit"},
	ExcessNoiseSig:       {Max, catalog.ExcessNoiseSig, []paramSpec{limitParam}, "excess_noise_sig <= limit"},
	FitVisits:            {Min, catalog.FitVisits, []paramSpec{limitParam}, "fit_visits >= limit"},
	Duplicate:            {NoLimit, catalog.DuplicateFlag, nil, "duplicate_flag is not 1 and the self-match found no duplicate"},
	MatchQuality: {NoLimit, -1, []paramSpec{
		{"catalog", kindCatalog, true},
		{"min_prob", kindNumber, false},
		{"max_sep_arcsec", kindNumber, false},
		{"allow_ambiguous", kindBool, false},
	}, "a matched counterpart has posterior >= min_prob, separation <= max_sep_arcsec and is not ambiguous"},
	RVPrecision:    {Max, catalog.RVErr, []paramSpec{limitParam}, "rv_err <= limit (km/s)"},
	SpectrumSNR:    {Min, catalog.SNR, []paramSpec{limitParam}, "snr >= limit"},
	RequiredFields: {NoLimit, -1, []paramSpec{{"fields", kindFieldList, true}}, "every listed field is present"},
}

// commonKeys are allowed in every rule.
var commonKeys = map[string]bool{
	"id": true, "description": true, "severity": true, "check": true,
	"expr": true, "when": true, "source": true, "voids": true,
}

// fieldByName maps canonical field names (not "id") to fields.
var fieldByName = func() map[string]catalog.Field {
	m := make(map[string]catalog.Field, catalog.NumFields)
	for f := catalog.Field(0); f < catalog.NumFields; f++ {
		if f != catalog.ID {
			m[catalog.Fields[f].Name] = f
		}
	}
	return m
}()
