package units

import (
	"math"
	"testing"
)

// The values the copies this package replaced evaluated to: a changed
// constant here would change results everywhere, bit for bit.
func TestValues(t *testing.T) {
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"RadPerDeg", RadPerDeg, 0.017453292519943295},
		{"DegPerRad", DegPerRad, 57.29577951308232},
		{"RadPerArcsec", RadPerArcsec, 4.84813681109536e-06},
		{"RadPerMas", RadPerMas, 4.84813681109536e-09},
		{"MuasPerRad", MuasPerRad, 2.0626480624709634e+11},
		{"MasPerDeg", MasPerDeg, 3.6e6},
		{"AuKm", AuKm, 149597870.7},
		// IAU 2012 B2 au and IAU 2015 B2 parsec: 1 pc = 3.0856775814913673e16 m.
		{"KpcKm", KpcKm, 3.0856775814913673e16},
		{"JulianYearS", JulianYearS, 31557600},
		// 149 597 870.700 km / 31 557 600 s.
		{"KmsPerMasYrKpc", KmsPerMasYrKpc, 4.740470463533349},
	} {
		if c.got != c.want {
			t.Errorf("%s = %.17g, want %.17g", c.name, c.got, c.want)
		}
	}
	if math.Abs(RadPerDeg*DegPerRad-1) > 1e-16 {
		t.Errorf("RadPerDeg*DegPerRad = %.17g", RadPerDeg*DegPerRad)
	}
}

// TestKmsPerMasYrKpc: 1 au per Julian year in km/s. The check value
// 4.740470464 is 149 597 870.700 km (1 au, IAU 2012 Resolution B2) divided by
// 31 557 600 s (Julian year, 365.25 d), rounded to 10 digits.
func TestKmsPerMasYrKpc(t *testing.T) {
	if math.Abs(KmsPerMasYrKpc-4.740470464) > 5e-10 {
		t.Errorf("KmsPerMasYrKpc = %.12f, want 4.740470464", KmsPerMasYrKpc)
	}
}
