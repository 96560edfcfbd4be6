package sky

import (
	"math"
	"math/rand/v2"
	"testing"

	"starvet/internal/units"
)

// Double-precision rounding floor for angles of order 1 rad (common
// practice: a few ulps of 1).
const roundingRad = 1e-15

// TestSeparationAnalytic: exact cases from elementary spherical geometry
// (analytic identities): along a meridian or the equator the separation is
// the coordinate difference; antipodes are pi apart.
func TestSeparationAnalytic(t *testing.T) {
	muas := 1 / units.MuasPerRad
	d0 := 0.5
	d1 := d0 + muas
	cases := []struct {
		name                 string
		ra1, dec1, ra2, dec2 float64
		want, tol            float64
	}{
		{"1 muas along meridian", 1.2, d0, 1.2, d1, d1 - d0, roundingRad},
		{"1 muas along equator", 0, 0, muas, 0, muas, 1e-12 * muas},
		{"1e-3 muas along equator", 0, 0, 1e-3 * muas, 0, 1e-3 * muas, 1e-12 * muas},
		{"1 muas along equator at ra=3", 3.0, 0, 3.0 + muas, 0, (3.0 + muas) - 3.0, roundingRad},
		{"across ra=0", 2*math.Pi - 1e-9, 0, 1e-9, 0, 2e-9, roundingRad},
		{"pole to pole", 0, math.Pi / 2, 2, -math.Pi / 2, math.Pi, roundingRad},
		{"antipodes", 1, 0.3, 1 + math.Pi, -0.3, math.Pi, roundingRad},
		{"1 muas short of antipodes on the equator", 0, 0, math.Pi - muas, 0, math.Pi - muas, roundingRad},
		{"1 muas short of antipodes across a pole", 0, math.Pi/2 - muas, math.Pi, -math.Pi / 2, math.Pi - muas, roundingRad},
		{"quarter circle", 0, 0, 0, math.Pi / 2, math.Pi / 2, roundingRad},
		{"same point", 4, -1, 4, -1, 0, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := Separation(c.ra1, c.dec1, c.ra2, c.dec2)
			if math.Abs(got-c.want) > c.tol {
				t.Errorf("Separation = %.17g, want %.17g +- %g", got, c.want, c.tol)
			}
			if back := Separation(c.ra2, c.dec2, c.ra1, c.dec1); back != got {
				t.Errorf("not symmetric: %.17g vs %.17g", back, got)
			}
		})
	}
}

// TestPositionAngle: north 0, east pi/2 (definition, IAU convention); from
// the north pole the position angle is pi - (ra2 - ra1), from the south pole
// ra2 - ra1 (analytic, the meridians meet there).
func TestPositionAngle(t *testing.T) {
	cases := []struct {
		name                 string
		ra1, dec1, ra2, dec2 float64
		want                 float64
	}{
		{"north", 1, 0.2, 1, 0.3, 0},
		{"east", 1, 0, 1.1, 0, math.Pi / 2},
		{"south", 1, 0.2, 1, 0.1, math.Pi},
		{"west", 1, 0, 0.9, 0, 3 * math.Pi / 2},
		{"east across ra=0", 2*math.Pi - 1e-6, 0, 1e-6, 0, math.Pi / 2},
		{"west across ra=0", 1e-6, 0, 2*math.Pi - 1e-6, 0, 3 * math.Pi / 2},
		{"from north pole", 0.5, math.Pi / 2, 1.5, 0.2, math.Pi - 1},
		{"from south pole", 0.5, -math.Pi / 2, 1.5, 0.2, 1},
		{"coincident", 2, 0.4, 2, 0.4, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := PositionAngle(c.ra1, c.dec1, c.ra2, c.dec2)
			if got < 0 || got >= 2*math.Pi {
				t.Fatalf("PositionAngle = %v outside [0, 2pi)", got)
			}
			if d := math.Abs(math.Remainder(got-c.want, 2*math.Pi)); d > 1e-12 {
				t.Errorf("PositionAngle = %.15g, want %.15g", got, c.want)
			}
		})
	}
}

// TestUnitVectorRoundTrip: FromUnitVector inverts UnitVector (identity), ra
// lands in [0, 2pi), and the poles and zero vector follow the documented
// conventions.
func TestUnitVectorRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for i := range 10000 {
		ra := rng.Float64()*6*math.Pi - 3*math.Pi
		dec := math.Asin(2*rng.Float64() - 1)
		v := UnitVector(ra, dec)
		if n := math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2]); math.Abs(n-1) > 4e-16 {
			t.Fatalf("case %d: |v| = %.17g", i, n)
		}
		ra2, dec2 := FromUnitVector([3]float64{3 * v[0], 3 * v[1], 3 * v[2]})
		if ra2 < 0 || ra2 >= 2*math.Pi {
			t.Fatalf("case %d: ra %v outside [0, 2pi)", i, ra2)
		}
		if s := Separation(ra, dec, ra2, dec2); s > 2*roundingRad {
			t.Fatalf("case %d: (%v,%v) -> (%v,%v), %.3g rad apart", i, ra, dec, ra2, dec2, s)
		}
	}
	cases := []struct {
		name    string
		v       [3]float64
		ra, dec float64
	}{
		{"north pole", [3]float64{0, 0, 2}, 0, math.Pi / 2},
		{"south pole", [3]float64{0, 0, -1}, 0, -math.Pi / 2},
		{"zero", [3]float64{}, 0, 0},
		{"tiny negative y", [3]float64{1, -1e-300, 0}, 0, 0},
		{"ra 270", [3]float64{0, -1, 0}, 1.5 * math.Pi, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ra, dec := FromUnitVector(c.v)
			if ra != c.ra || dec != c.dec {
				t.Errorf("FromUnitVector = (%v, %v), want (%v, %v)", ra, dec, c.ra, c.dec)
			}
		})
	}
}

// TestWrap: range reduction into [0, 360) and [0, 2pi) (definition).
func TestWrap(t *testing.T) {
	cases := []struct{ in, want float64 }{
		{-1e-20, 0}, {360, 0}, {-360, 0}, {725, 5}, {-90, 270}, {359.5, 359.5},
	}
	for _, c := range cases {
		if got := wrapDeg360(c.in); got != c.want || got < 0 || got >= 360 {
			t.Errorf("wrapDeg360(%v) = %v, want %v", c.in, got, c.want)
		}
	}
	if got := wrapTwoPi(-1e-20); got != 0 {
		t.Errorf("wrapTwoPi(-1e-20) = %v, want 0", got)
	}
}

func BenchmarkSeparation(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 1024
	var ra, dec [n]float64
	for i := range n {
		ra[i], dec[i] = rng.Float64()*2*math.Pi, math.Asin(2*rng.Float64()-1)
	}
	var sink float64
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		j := i % (n - 1)
		sink += Separation(ra[j], dec[j], ra[j+1], dec[j+1])
	}
	_ = sink
}
