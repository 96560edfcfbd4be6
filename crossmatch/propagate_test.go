package crossmatch

import (
	"math"
	"testing"

	"starvet/crossmatch/sky"
	"starvet/internal/units"
)

func TestPropagateAgainstERFA(t *testing.T) {
	// Reference positions from ERFA 2.0.0 eraPmsafe (Debian liberfa-dev),
	// called with pmr = pm_ra / cos(dec), px in arcsec, epochs as TDB
	// Julian dates 2451545 + (J - 2000) 365.25; printed with 12 decimals
	// (3.6 micro-arcsec). sky.Propagate follows eraPmsafe, so they agree
	// to the print precision.
	cases := []struct {
		ra, dec, pmRA, pmDec, plx, rv, from, to float64
		wantRA, wantDec                         float64
	}{
		{10, 20, 500, -300, 100, 50, 2000, 2016, 10.002364626014, 19.998666760057},
		{200, 10, -900, 9000, 400, -100, 2000, 2016, 199.995935132131, 10.040026171684},
		{359.9999, -30, 2000, 1000, 20, 300, 2015.5, 2000, 359.989955368627, -30.004305591158},
		{45, 89.9, 2000, 2000, 10, -200, 2000, 2020, 52.125343694608, 89.910419753606},
		{120, -60, 50, 80, 1, 0, 1991.25, 2016, 120.000687488569, -59.999449998214},
	}
	const tolMas = 0.005
	for _, c := range cases {
		t.Run("", func(t *testing.T) {
			ra, dec, ok := propagate(astro(c.ra, c.dec, c.plx, c.pmRA, c.pmDec, c.rv), c.from, c.to)
			if !ok {
				t.Fatal("not propagated")
			}
			sepMas := sky.Separation(ra*units.RadPerDeg, dec*units.RadPerDeg, c.wantRA*units.RadPerDeg, c.wantDec*units.RadPerDeg) / units.RadPerMas
			t.Logf("%.4f mas from ERFA", sepMas)
			if sepMas > tolMas {
				t.Errorf("(%g, %g) -> (%.9f, %.9f), ERFA (%.9f, %.9f): %.3f mas apart",
					c.ra, c.dec, ra, dec, c.wantRA, c.wantDec, sepMas)
			}
		})
	}
}

func TestPropagateGreatCircle(t *testing.T) {
	// Without parallax/rv the star moves along a great circle by mu dt
	// (the model sky.Propagate documents; an analytic identity): check the
	// distance moved and the range of the result.
	cases := []struct{ ra, dec, pmRA, pmDec, dt float64 }{
		{0.0001, 0, -3000, 0, 20},   // crosses ra = 0
		{180, 89.999, 1000, 0, 30},  // passes near the north pole
		{30, -89.999, 0, -2000, 10}, // over the south pole
		{250, 45, 123, -456, -15.5},
	}
	for _, c := range cases {
		nan := math.NaN()
		ra, dec, _ := propagate(astro(c.ra, c.dec, nan, c.pmRA, c.pmDec, nan), 2000, 2000+c.dt)
		mu := math.Hypot(c.pmRA, c.pmDec) * units.RadPerMas * math.Abs(c.dt)
		moved := sky.Separation(c.ra*units.RadPerDeg, c.dec*units.RadPerDeg, ra*units.RadPerDeg, dec*units.RadPerDeg)
		if math.Abs(moved-mu) > 1e-12 {
			t.Errorf("%+v: moved %.12g rad, want mu dt = %.12g", c, moved, mu)
		}
		if ra < 0 || ra >= 360 || dec < -90 || dec > 90 {
			t.Errorf("%+v: result (%g, %g) out of range", c, ra, dec)
		}
	}
	// No proper motion: not moved, reported.
	ra, dec, ok := propagate(astro(1, 2, 3, math.NaN(), 5, 6), 2000, 2010)
	if ok || ra != 1 || dec != 2 {
		t.Errorf("missing pm: got (%g, %g, %v), want (1, 2, false)", ra, dec, ok)
	}
}
