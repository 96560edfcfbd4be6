//go:build erfa

package frames

import (
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
)

// Live randomized comparison with ERFA (derived from IAU SOFA) through cgo:
//
//	go test -tags erfa ./vetting/frames
//
// The seed is printed; set STARVET_SEED to repeat or vary a run.

func liveSeed(t *testing.T) uint64 {
	t.Helper()
	seed := uint64(20261201)
	if s := os.Getenv("STARVET_SEED"); s != "" {
		v, err := strconv.ParseUint(s, 10, 64)
		if err != nil {
			t.Fatalf("STARVET_SEED=%q: %v", s, err)
		}
		seed = v
	}
	t.Logf("seed %d (override with STARVET_SEED)", seed)
	return seed
}

// TestLiveGalactic: ICRSToGalactic against eraIcrs2g and GalacticToICRS
// against eraG2icrs, 1e-10 rad (the task's tolerance) as an angle on the sky;
// a tenth of the cases sit within 1e-3 rad of a celestial or Galactic pole.
func TestLiveGalactic(t *testing.T) {
	rng := rand.New(rand.NewPCG(liveSeed(t), 3))
	worst := 0.0
	for i := range 50000 {
		a, d := rng.Float64()*2*math.Pi, math.Asin(2*rng.Float64()-1)
		if i%10 == 0 {
			d = math.Copysign(math.Pi/2-1e-3*rng.Float64(), d)
		}
		l, b := ICRSToGalactic(a, d)
		wl, wb := erfaIcrs2g(a, d)
		s1 := angle(l, b, wl, wb)
		ra, dec := GalacticToICRS(a, d) // (a, d) read as (l, b) here
		wra, wdec := erfaG2icrs(a, d)
		s2 := angle(ra, dec, wra, wdec)
		worst = math.Max(worst, math.Max(s1, s2))
		if s1 > 1e-10 || s2 > 1e-10 {
			t.Fatalf("case %d: (%v, %v): icrs2g off %.3g rad, g2icrs off %.3g rad", i, a, d, s1, s2)
		}
	}
	t.Logf("worst difference %.3g rad", worst)
}

// TestLiveMatrix: the columns of ICRSToGal are the Galactic images of the
// ICRS axes, which eraIcrs2g gives as directions; compare elementwise to
// 1e-12 (our own tolerance: both sides derive from the same defining angles).
func TestLiveMatrix(t *testing.T) {
	axes := [3][2]float64{{0, 0}, {math.Pi / 2, 0}, {0, math.Pi / 2}}
	for j, ax := range axes {
		l, b := erfaIcrs2g(ax[0], ax[1])
		col := [3]float64{math.Cos(b) * math.Cos(l), math.Cos(b) * math.Sin(l), math.Sin(b)}
		for i := range 3 {
			if math.Abs(ICRSToGal[i][j]-col[i]) > 1e-12 {
				t.Errorf("ICRSToGal[%d][%d] = %.15f, ERFA %.15f", i, j, ICRSToGal[i][j], col[i])
			}
		}
	}
}
