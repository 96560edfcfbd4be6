package catalog

import (
	"fmt"
	"math"

	"starvet/internal/units"
)

// Unit factors turning a value in the named unit into the canonical unit
// are in starvet/internal/units.

const ln10Over5 = math.Ln10 / 5 // d(ln d)/d(mu) for d = 10^(mu/5+1) pc

// FieldByName returns the canonical field with the given name. DistMod and
// DistModErr are found too; use Mappable to know whether a campaign may map
// a file column onto a field.
func FieldByName(name string) (Field, bool) {
	for f := Field(0); f < NumFields; f++ {
		if Fields[f].Name == name {
			return f, true
		}
	}
	return 0, false
}

// Mappable reports whether a file column may be mapped onto f. The distance
// modulus fields are derived from distance (unit "mag") and cannot.
func Mappable(f Field) bool { return f >= 0 && f < NumFields && f != DistMod && f != DistModErr }

// unitChoices lists, per field, the units a catalog may declare. The first
// entry is the canonical unit. Fields absent from the map accept only their
// canonical unit.
func unitChoices(f Field) []string {
	switch f {
	case RA:
		return []string{"deg", "hour"}
	case RAErr, DecErr, Parallax, ParallaxErr, ExcessNoise:
		return []string{"mas", "arcsec", "deg", "uarcsec"}
	case PMRA, PMRAErr, PMDec, PMDecErr:
		return []string{"mas/yr", "arcsec/yr"}
	case RV, RVErr:
		return []string{"km/s", "m/s"}
	case Distance, DistanceErr:
		return []string{"kpc", "pc", "mag"}
	}
	return []string{Fields[f].Unit}
}

// ErrBadUnit marks a unit a field does not accept.
var ErrBadUnit = fmt.Errorf("unknown unit")

// CheckUnit reports whether unit is acceptable for field f. The empty
// string means the canonical unit.
func CheckUnit(f Field, unit string) error {
	if unit == "" {
		return nil
	}
	ch := unitChoices(f)
	for _, u := range ch {
		if u == unit {
			return nil
		}
	}
	return fmt.Errorf("%w %q for %s (accepted: %q)", ErrBadUnit, unit, Fields[f].Name, ch)
}

// unitFactor returns the multiplier that brings a value in unit to the
// canonical unit of f. Distance moduli (unit "mag") are not linear and are
// handled by the reader; for them the factor is 1.
func unitFactor(f Field, unit string) float64 {
	switch unit {
	case "hour":
		return units.DegPerHour
	case "arcsec":
		return units.MasPerArcsec
	case "uarcsec":
		return 1 / units.MuasPerMas
	case "deg":
		if f != RA && f != Dec {
			return units.MasPerDeg
		}
	case "arcsec/yr":
		return units.MasPerArcsec
	case "m/s":
		return units.KmPerM
	case "pc":
		return units.KpcPerPc
	}
	return 1
}

// DistanceFromModulus converts a distance modulus mu (mag) and its error to
// a distance and error in kpc: d = 10^(mu/5+1) pc (definition of the
// distance modulus, mu = 5 log10(d / 10 pc)), and to first order
// sigma_d = d ln(10)/5 sigma_mu.
func DistanceFromModulus(muMag, muErrMag float64) (distKpc, distErrKpc float64) {
	distKpc = math.Pow(10, muMag/5+1) * units.KpcPerPc
	return distKpc, distKpc * ln10Over5 * muErrMag
}
