package frames

import (
	"math"
	"math/rand/v2"
	"testing"

	"starvet/internal/units"
	"starvet/internal/vec"
)

// TestMatrixElements compares ICRSToGal with the matrix printed in ESA 1997,
// The Hipparcos and Tycho Catalogues, ESA SP-1200, Vol. 1, section 1.5.3,
// eq. 1.5.11, given there to 10 decimals (so the tolerance is 5e-11 plus
// rounding).
func TestMatrixElements(t *testing.T) {
	want := [3][3]float64{
		{-0.0548755604, -0.8734370902, -0.4838350155},
		{+0.4941094279, -0.4448296300, +0.7469822445},
		{-0.8676661490, -0.1980763734, +0.4559837762},
	}
	for i := range 3 {
		for j := range 3 {
			if d := math.Abs(ICRSToGal[i][j] - want[i][j]); d > 5.1e-11 {
				t.Errorf("ICRSToGal[%d][%d] = %.13f, ESA SP-1200 %.10f", i, j, ICRSToGal[i][j], want[i][j])
			}
		}
	}
	// Orthonormality (analytic identity of a rotation).
	for i := range 3 {
		for j := range 3 {
			d := vec.Dot(ICRSToGal[i], ICRSToGal[j])
			if i == j {
				d--
			}
			if math.Abs(d) > 1e-15 {
				t.Errorf("row %d . row %d off by %g", i, j, d)
			}
		}
	}
}

// TestSpecialDirections: the defining angles (ESA 1997, ESA SP-1200, Vol. 1,
// section 1.5.3) put the north Galactic pole at (192.85948, +27.12825) deg
// and the north celestial pole at l = 122.93192 deg; the Galactic centre
// direction l = b = 0 is ICRS (266.40499, -28.93617) deg, computed with ERFA
// eraG2icrs (row 1 of testdata/erfa/g2icrs.csv), given to 5 decimals.
func TestSpecialDirections(t *testing.T) {
	cases := []struct {
		name    string
		ra, dec float64 // deg
		l, b    float64 // deg
		tolDeg  float64
		skipL   bool // longitude undefined at the pole
	}{
		{"north Galactic pole", 192.85948, 27.12825, 0, 90, 1e-10, true},
		{"south Galactic pole", 12.85948, -27.12825, 0, -90, 1e-10, true},
		{"north celestial pole", 0, 90, 122.93192, 27.12825, 1e-10, false},
		{"Galactic centre", 266.40499, -28.93617, 0, 0, 6e-6, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			l, b := ICRSToGalactic(c.ra*units.RadPerDeg, c.dec*units.RadPerDeg)
			if math.Abs(b/units.RadPerDeg-c.b) > c.tolDeg {
				t.Errorf("b = %.10f deg, want %.10f", b/units.RadPerDeg, c.b)
			}
			if !c.skipL && math.Abs(math.Remainder(l/units.RadPerDeg-c.l, 360)) > c.tolDeg {
				t.Errorf("l = %.10f deg, want %.10f", l/units.RadPerDeg, c.l)
			}
			if c.skipL {
				return
			}
			ra, dec := GalacticToICRS(c.l*units.RadPerDeg, c.b*units.RadPerDeg)
			if math.Abs(dec/units.RadPerDeg-c.dec) > c.tolDeg || math.Abs(math.Remainder(ra/units.RadPerDeg-c.ra, 360))*math.Cos(dec) > c.tolDeg {
				t.Errorf("GalacticToICRS = (%.10f, %.10f) deg, want (%.10f, %.10f)", ra/units.RadPerDeg, dec/units.RadPerDeg, c.ra, c.dec)
			}
		})
	}
}

// TestGalacticRoundTrip: GalacticToICRS inverts ICRSToGalactic (identity);
// longitudes in [0, 2pi).
func TestGalacticRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for i := range 10000 {
		ra, dec := rng.Float64()*2*math.Pi, math.Asin(2*rng.Float64()-1)
		l, b := ICRSToGalactic(ra, dec)
		if l < 0 || l >= 2*math.Pi {
			t.Fatalf("case %d: l = %v outside [0, 2pi)", i, l)
		}
		ra2, dec2 := GalacticToICRS(l, b)
		if ra2 < 0 || ra2 >= 2*math.Pi {
			t.Fatalf("case %d: ra = %v outside [0, 2pi)", i, ra2)
		}
		if s := angle(ra, dec, ra2, dec2); s > 3e-15 {
			t.Fatalf("case %d: (%v,%v) -> (%v,%v): %g rad", i, ra, dec, ra2, dec2, s)
		}
	}
}

// angle between two directions, radians (Vincenty; sky.Separation is not
// imported to keep frames free of crossmatch).
func angle(ra1, dec1, ra2, dec2 float64) float64 {
	sd1, cd1 := math.Sincos(dec1)
	sd2, cd2 := math.Sincos(dec2)
	sdr, cdr := math.Sincos(ra2 - ra1)
	return math.Atan2(math.Hypot(cd2*sdr, cd1*sd2-sd1*cd2*cdr), sd1*sd2+cd1*cd2*cdr)
}

// TestDefaultSun: the values and sources documented in DefaultSun
// (GRAVITY Collaboration 2018, A&A 615, L15; Bennett & Bovy 2019, MNRAS 482,
// 1417; Drimmel & Poggio 2018, RNAAS 2, 210).
func TestDefaultSun(t *testing.T) {
	s := DefaultSun()
	if s.DistanceKpc != 8.122 || s.HeightPc != 20.8 || s.VelocityKms != [3]float64{12.9, 245.6, 7.78} {
		t.Errorf("DefaultSun = %+v", s)
	}
}

// TestSunPlacement: the Sun itself (distance 0, rv 0; proper motions do not
// matter at distance 0) lands at (-R0 cos t, 0, z_sun) with sin t =
// z_sun/R0 and moves with the Sun's velocity, and the point at distance R0
// toward l = b = 0 is the origin (the frame definition).
func TestSunPlacement(t *testing.T) {
	suns := []struct {
		name string
		s    Sun
	}{
		{"default", DefaultSun()},
		{"high", Sun{DistanceKpc: 8, HeightPc: 500, VelocityKms: [3]float64{1, 2, 3}}},
		{"untilted", Sun{DistanceKpc: 8.5, VelocityKms: [3]float64{11.1, 232.24, 7.25}}},
	}
	for _, c := range suns {
		t.Run(c.name, func(t *testing.T) {
			zKpc := c.s.HeightPc / 1000
			ct := math.Sqrt(1 - (zKpc/c.s.DistanceKpc)*(zKpc/c.s.DistanceKpc))
			pos, vel := c.s.ToGalactocentric(NewBasis(1.1, -0.4), 0, 123, -45, 0)
			want := [3]float64{-c.s.DistanceKpc * ct, 0, zKpc}
			for i := range 3 {
				if math.Abs(pos[i]-want[i]) > 1e-14 {
					t.Errorf("Sun at %v, want %v", pos, want)
				}
				if math.Abs(vel[i]-c.s.VelocityKms[i]) > 1e-13 {
					t.Errorf("Sun moves with %v, want %v", vel, c.s.VelocityKms)
				}
			}
			ra, dec := GalacticToICRS(0, 0)
			gc, _ := c.s.ToGalactocentric(NewBasis(ra, dec), c.s.DistanceKpc, 0, 0, 0)
			if n := math.Sqrt(vec.Dot(gc, gc)); n > 1e-13 {
				t.Errorf("Galactic centre at %v, want origin", gc)
			}
		})
	}
}

// TestStarAtRest: a star at rest in the Galactocentric frame has
// heliocentric velocity minus the Sun's (frame definition): rebuilding the
// heliocentric velocity from the returned pm and rv and undoing the tilt
// gives -v_sun; converting back gives zero velocity.
func TestStarAtRest(t *testing.T) {
	s := DefaultSun()
	st := s.HeightPc / 1000 / s.DistanceKpc
	ct := math.Sqrt(1 - st*st)
	rng := rand.New(rand.NewPCG(8, 9))
	for i := range 1000 {
		pos := [3]float64{rng.NormFloat64() * 10, rng.NormFloat64() * 10, rng.NormFloat64() * 3}
		ra, dec, dist, pmra, pmdec, rv := s.FromGalactocentric(pos, [3]float64{})
		b := NewBasis(ra, dec)
		k := units.KmsPerMasYrKpc * dist
		var v [3]float64
		for j := range 3 {
			v[j] = rv*b.R[j] + k*(pmra*b.P[j]+pmdec*b.Q[j])
		}
		// Heliocentric Galactic axes -> Galactocentric axes (the tilt).
		v = [3]float64{ct*v[0] + st*v[2], v[1], -st*v[0] + ct*v[2]}
		for j := range 3 {
			if math.Abs(v[j]+s.VelocityKms[j]) > 1e-11 {
				t.Fatalf("case %d: heliocentric velocity %v, want minus %v", i, v, s.VelocityKms)
			}
		}
		_, vel := s.ToGalactocentric(b, dist, pmra, pmdec, rv)
		if n := math.Sqrt(vec.Dot(vel, vel)); n > 1e-11 {
			t.Fatalf("case %d: round trip velocity %v, want 0", i, vel)
		}
	}
}
