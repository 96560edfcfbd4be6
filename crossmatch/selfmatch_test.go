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

func TestSelfMatchAgainstBruteForce(t *testing.T) {
	seed := testSeed(t, 7)
	rng := rand.New(rand.NewPCG(seed, 5))
	ra, dec := skyPoints(rng, 1500)
	// exact duplicates and close pairs
	for k := 0; k < 200; k++ {
		i := rng.IntN(len(ra))
		if math.IsNaN(ra[i]) || math.IsNaN(dec[i]) {
			continue
		}
		r2, d2 := ra[i], dec[i]
		if k%2 == 1 {
			r2, d2 = offset(ra[i], dec[i], rng.Float64()*2, rng.Float64()*2*math.Pi)
		}
		ra, dec = append(ra, r2), append(dec, d2)
	}
	rows := make([]src, len(ra))
	for i := range ra {
		rows[i] = newSrc("x", ra[i], dec[i], 100)
	}
	tb := table("self", 2016, rows)
	for _, radius := range []float64{0.5, 1.5, 30} {
		got, err := SelfMatch(context.Background(), tb, radius, 2)
		if err != nil {
			t.Fatal(err)
		}
		dups := 0
		for i := range ra {
			want := int32(0)
			if math.IsNaN(ra[i]) || math.IsNaN(dec[i]) {
				want = -1
			} else {
				for j := range ra {
					if j == i || math.IsNaN(ra[j]) || math.IsNaN(dec[j]) {
						continue
					}
					if sky.Separation(normRA(ra[i])*units.RadPerDeg, dec[i]*units.RadPerDeg, normRA(ra[j])*units.RadPerDeg, dec[j]*units.RadPerDeg) < radius*units.RadPerArcsec {
						want++
					}
				}
			}
			if got[i] != want {
				t.Fatalf("radius %g\", row %d (%g, %g): %d others, brute force %d", radius, i, ra[i], dec[i], got[i], want)
			}
			if want > 0 {
				dups++
			}
		}
		if dups < 100 {
			t.Errorf("radius %g: only %d rows with neighbours; test data too thin", radius, dups)
		}
	}
}

func TestSelfMatchErrors(t *testing.T) {
	tb := table("self", 2016, []src{newSrc("a", 1, 1, 1), newSrc("b", 1, -95, 1)})
	_, err := SelfMatch(context.Background(), tb, 1, 1)
	want := `self-match: catalog "self": line 3: column dec: value -95 outside [-90, 90]: bad position`
	if err == nil || err.Error() != want || !errors.Is(err, ErrBadPosition) {
		t.Errorf("err = %v, want %s", err, want)
	}
	if _, err := SelfMatch(context.Background(), tb, -1, 1); !errors.Is(err, ErrBadOptions) {
		t.Errorf("negative radius: err = %v", err)
	}
}
