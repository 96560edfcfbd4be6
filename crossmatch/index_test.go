package crossmatch

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"starvet/crossmatch/sky"
	"starvet/internal/units"
)

// skyPoints draws n points: a uniform part plus crowds at the RA wrap and
// at both poles, where the box arithmetic has its special cases.
func skyPoints(rng *rand.Rand, n int) (ra, dec []float64) {
	for i := 0; i < n; i++ {
		var r, d float64
		switch i % 4 {
		case 0: // uniform on the sphere
			r, d = rng.Float64()*360, math.Asin(2*rng.Float64()-1)*units.DegPerRad
		case 1: // within 0.01 deg of ra = 0
			r, d = normRA((rng.Float64()-0.5)*0.02), (rng.Float64()-0.5)*20
		case 2: // within 0.01 deg of the north pole
			r, d = rng.Float64()*360, 90-rng.Float64()*0.01
		case 3: // within 0.01 deg of the south pole
			r, d = rng.Float64()*360, -90+rng.Float64()*0.01
		}
		ra, dec = append(ra, r), append(dec, d)
	}
	ra = append(ra, 0, 359.9999999, 12, 200, 45, math.NaN())
	dec = append(dec, 90, -90, math.NaN(), 0, -89.9999999, 3)
	return ra, dec
}

func TestIndexWithinAgainstBruteForce(t *testing.T) {
	seed := testSeed(t, 11)
	rng := rand.New(rand.NewPCG(seed, 1))
	ra, dec := skyPoints(rng, 4000)
	ix, err := NewIndex(context.Background(), ra, dec, 2)
	if err != nil {
		t.Fatal(err)
	}
	if ix.Len() != len(ra) || ix.Indexed() != len(ra)-2 {
		t.Fatalf("Len %d Indexed %d, want %d and %d", ix.Len(), ix.Indexed(), len(ra), len(ra)-2)
	}
	qra, qdec := skyPoints(rng, 200)
	radii := []float64{1.0 / units.ArcsecPerDeg, 10.0 / units.ArcsecPerDeg, 0.005, 0.05, 1, 20, 75, 120, 180}
	for _, r := range radii {
		total := 0
		nq := len(qra)
		if r >= 1 { // big caps: fewer queries keep the brute force short
			nq = 40
		}
		for q := range nq {
			got := ix.Within(qra[q], qdec[q], r, nil)
			var want []Neighbor
			if !math.IsNaN(qra[q]) && !math.IsNaN(qdec[q]) {
				for i := range ra {
					if math.IsNaN(ra[i]) || math.IsNaN(dec[i]) {
						continue
					}
					s := sky.Separation(normRA(qra[q])*units.RadPerDeg, qdec[q]*units.RadPerDeg, normRA(ra[i])*units.RadPerDeg, dec[i]*units.RadPerDeg)
					if s <= r*units.RadPerDeg {
						want = append(want, Neighbor{int32(i), s})
					}
				}
			}
			total += len(want)
			if len(got) != len(want) {
				t.Fatalf("radius %g deg, query (%g, %g): %d rows, brute force %d", r, qra[q], qdec[q], len(got), len(want))
			}
			for k := range got {
				if got[k] != want[k] {
					t.Fatalf("radius %g deg, query (%g, %g): hit %d = %+v, want %+v", r, qra[q], qdec[q], k, got[k], want[k])
				}
			}
		}
		if total == 0 {
			t.Errorf("radius %g deg: no hits at all, the test checks nothing", r)
		}
	}
}

func TestBoxHalfWidthEnclosesCap(t *testing.T) {
	// The exact RA half-width of a cap of radius r centred at dec d (not
	// containing a pole) is asin(sin r / cos d) (spherical trigonometry,
	// from memory); the r / cos(|d| + r) used by searchBoxes must not be
	// smaller.
	for d := 0.0; d < 90; d += 0.5 {
		for _, r := range []float64{1e-6, 1e-3, 0.1, 1, 5, 20, 45, 80} {
			if d+r >= 90 {
				continue
			}
			exact := math.Asin(math.Sin(r*units.RadPerDeg)/math.Cos(d*units.RadPerDeg)) * units.DegPerRad
			box := r / math.Cos((d+r)*units.RadPerDeg)
			if box < exact {
				t.Errorf("dec %g, r %g: box half-width %g < exact %g", d, r, box, exact)
			}
		}
	}
}

func TestNewIndexErrors(t *testing.T) {
	cases := []struct {
		name    string
		ra, dec []float64
		want    string
	}{
		{"dec above 90", []float64{1, 2}, []float64{0, 90.5}, "index: row 1: position (2, 90.5) deg: bad position"},
		{"infinite ra", []float64{math.Inf(1)}, []float64{0}, "index: row 0: position (+Inf, 0) deg: bad position"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := NewIndex(context.Background(), c.ra, c.dec, 1)
			if err == nil || err.Error() != c.want || !errors.Is(err, ErrBadPosition) {
				t.Errorf("err = %v, want %q wrapping ErrBadPosition", err, c.want)
			}
		})
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := NewIndex(ctx, []float64{1}, []float64{1}, 1); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: err = %v", err)
	}
}
