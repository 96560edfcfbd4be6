package frames

import (
	"math"
	"math/rand/v2"
	"testing"

	"starvet/internal/units"
)

// TestFromGalactocentricRoundTrip: ToGalactocentric followed by
// FromGalactocentric must return the inputs (an identity of the two
// transforms, no external value involved).
func TestFromGalactocentricRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(20261201, 1))
	suns := []struct {
		name string
		sun  Sun
	}{
		{"default", DefaultSun()},
		{"no tilt", Sun{DistanceKpc: 8, HeightPc: 0, VelocityKms: [3]float64{11, 232, 7}}},
		{"large tilt", Sun{DistanceKpc: 8, HeightPc: 800, VelocityKms: [3]float64{-5, 200, 30}}},
	}
	for _, sc := range suns {
		t.Run(sc.name, func(t *testing.T) {
			for i := range 2000 {
				ra := rng.Float64() * 2 * math.Pi
				dec := math.Asin(2*rng.Float64() - 1)
				dist := math.Exp(rng.Float64()*8 - 5) // 7 pc .. 20 kpc
				pmra := rng.NormFloat64() * 50
				pmdec := rng.NormFloat64() * 50
				rv := rng.NormFloat64() * 300
				pos, vel := sc.sun.ToGalactocentric(NewBasis(ra, dec), dist, pmra, pmdec, rv)
				ra2, dec2, dist2, pmra2, pmdec2, rv2 := sc.sun.FromGalactocentric(pos, vel)
				// Angular mismatch on the sphere, radians.
				dra := math.Remainder(ra2-ra, 2*math.Pi) * math.Cos(dec)
				if math.Hypot(dra, dec2-dec) > 1e-12 {
					t.Fatalf("case %d: direction (%v,%v) -> (%v,%v)", i, ra, dec, ra2, dec2)
				}
				if math.Abs(dist2-dist) > 1e-12*(1+dist+sc.sun.DistanceKpc) {
					t.Fatalf("case %d: dist %v -> %v", i, dist, dist2)
				}
				// Velocity errors scale with the largest speed involved (the
				// Sun's ~250 km/s) over k = 4.74 dist.
				tolPM := 1e-11 * 300 / (units.KmsPerMasYrKpc * dist)
				if math.Abs(pmra2-pmra) > tolPM || math.Abs(pmdec2-pmdec) > tolPM {
					t.Fatalf("case %d: pm (%v,%v) -> (%v,%v)", i, pmra, pmdec, pmra2, pmdec2)
				}
				if math.Abs(rv2-rv) > 1e-10 {
					t.Fatalf("case %d: rv %v -> %v", i, rv, rv2)
				}
			}
		})
	}
	t.Run("sun itself", func(t *testing.T) {
		// With no tilt the Sun's position is exactly (-R0, 0, 0), so the
		// heliocentric distance is exactly 0 and the direction undefined.
		s := Sun{DistanceKpc: 8, VelocityKms: [3]float64{10, 230, 7}}
		ra, dec, d, pmra, pmdec, rv := s.FromGalactocentric([3]float64{-8, 0, 0}, s.VelocityKms)
		if ra != 0 || dec != 0 || d != 0 || !math.IsNaN(pmra) || !math.IsNaN(pmdec) || !math.IsNaN(rv) {
			t.Errorf("got (%v,%v,%v,%v,%v,%v), want (0,0,0,NaN,NaN,NaN)", ra, dec, d, pmra, pmdec, rv)
		}
	})
}
