//go:build erfa

package sky

import (
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"

	"starvet/internal/units"
	"starvet/internal/vec"
)

// Live randomized comparison with ERFA (derived from IAU SOFA) through cgo:
//
//	go test -tags erfa ./crossmatch/sky
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

// randomDirection returns a direction, a tenth of them within 1e-8..1e-3 rad
// of a pole and a tenth within 1e-5 rad of ra = 0.
func randomDirection(rng *rand.Rand) (ra, dec float64) {
	ra, dec = rng.Float64()*2*math.Pi, math.Asin(2*rng.Float64()-1)
	switch rng.IntN(10) {
	case 0:
		dec = math.Copysign(math.Pi/2-math.Pow(10, -8+5*rng.Float64()), dec)
	case 1:
		ra = math.Mod(2*math.Pi+(2*rng.Float64()-1)*1e-5, 2*math.Pi)
	}
	return ra, dec
}

// TestLiveSeparation: 1e-12 relative or 1 micro-arcsec (the task's
// tolerance) against eraSeps, including tiny and near-antipodal pairs;
// position angles against eraPas where they are well conditioned.
func TestLiveSeparation(t *testing.T) {
	rng := rand.New(rand.NewPCG(liveSeed(t), 1))
	const oneMuas = 1 / units.MuasPerRad
	worst := 0.0
	for i := range 20000 {
		ra1, dec1 := randomDirection(rng)
		var ra2, dec2 float64
		switch i % 3 {
		case 0:
			ra2, dec2 = randomDirection(rng)
		case 1: // tiny, 1e-13 .. 1e-3 rad
			s, pa := math.Pow(10, -13+10*rng.Float64()), rng.Float64()*2*math.Pi
			ra2, dec2 = ra1+s*math.Sin(pa)/math.Max(math.Cos(dec1), 1e-3), dec1+s*math.Cos(pa)
		case 2: // near antipodal
			s := math.Pow(10, -10+7*rng.Float64())
			ra2, dec2 = ra1+math.Pi+(2*rng.Float64()-1)*s, -dec1+(2*rng.Float64()-1)*s
		}
		want := erfaSeps(ra1, dec1, ra2, dec2)
		got := Separation(ra1, dec1, ra2, dec2)
		d := math.Abs(got - want)
		worst = math.Max(worst, d)
		if d > math.Max(1e-12*want, oneMuas) {
			t.Fatalf("case %d: Separation(%v,%v,%v,%v) = %.17g, eraSeps %.17g", i, ra1, dec1, ra2, dec2, got, want)
		}
		pa, wantPA := PositionAngle(ra1, dec1, ra2, dec2), erfaPas(ra1, dec1, ra2, dec2)
		if dpa := math.Abs(math.Remainder(pa-wantPA, 2*math.Pi)); dpa*math.Sin(want) > oneMuas && dpa > 1e-9 {
			t.Fatalf("case %d: PositionAngle = %.17g, eraPas %.17g", i, pa, wantPA)
		}
	}
	t.Logf("worst separation difference %.3g muas", worst*units.MuasPerRad)
}

// TestLivePropagate: Propagate against eraPmsafe; positions to 1 micro-arcsec
// (the task's tolerance), proper motions to 1e-6 mas/yr.
func TestLivePropagate(t *testing.T) {
	rng := rand.New(rand.NewPCG(liveSeed(t), 2))
	const j2000, jy = 2451545.0, units.JulianYearDay
	worst := 0.0
	for i := range 20000 {
		ra, dec := randomDirection(rng)
		var muAs, pxAs float64
		switch i % 4 {
		case 0, 1: // ordinary
			muAs, pxAs = math.Pow(10, -4+4*rng.Float64()), math.Pow(10, -4.3+4*rng.Float64())
		case 2: // high proper motion, nearby
			muAs, pxAs = 1+9*rng.Float64(), 0.05+0.75*rng.Float64()
		case 3: // tiny parallax: the pmsafe override
			muAs, pxAs = math.Pow(10, -3+3*rng.Float64()), math.Pow(10, -9+4*rng.Float64())
		}
		pa := rng.Float64() * 2 * math.Pi
		pmRAStar, pmDec := muAs*math.Sin(pa)*1000, muAs*math.Cos(pa)*1000 // mas/yr
		rv := 2000*rng.Float64() - 1000
		ep1, ep2 := 1900+200*rng.Float64(), 1900+200*rng.Float64()
		in := Astrometry{RADeg: ra * units.DegPerRad, DecDeg: dec * units.DegPerRad, ParallaxMas: pxAs * 1000,
			PMRAMasYr: pmRAStar, PMDecMasYr: pmDec, RVKms: rv}
		// ERFA takes dRA/dt, not mu_alpha*; the star's position as we
		// store it (degrees) is what both sides see.
		raIn, decIn := in.RADeg*units.RadPerDeg, in.DecDeg*units.RadPerDeg
		ra2, dec2, pmr2, pmd2, _, _, status := erfaPmsafe(raIn, decIn, pmRAStar*units.RadPerMas/math.Cos(decIn), pmDec*units.RadPerMas,
			pxAs, rv, j2000, (ep1-2000)*jy, j2000, (ep2-2000)*jy)
		if status < 0 {
			continue
		}
		out := Propagate(in, ep1, ep2)
		s := Separation(out.RADeg*units.RadPerDeg, out.DecDeg*units.RadPerDeg, ra2, dec2) * units.MuasPerRad
		worst = math.Max(worst, s)
		if s > 1 {
			t.Fatalf("case %d: %+v from %v to %v: (%.12f, %.12f) deg, eraPmsafe (%.12f, %.12f) (status %d): %.3g muas",
				i, in, ep1, ep2, out.RADeg, out.DecDeg, ra2*units.DegPerRad, dec2*units.DegPerRad, status, s)
		}
		// Near a pole mu_alpha* is ill-conditioned: compare the proper
		// motion as a vector, 1e-6 mas/yr plus 1e-15/cos(dec) relative.
		p2, q2 := axesOf(UnitVector(ra2, dec2))
		pOut, qOut := axesOf(UnitVector(out.RADeg*units.RadPerDeg, out.DecDeg*units.RadPerDeg))
		var dv [3]float64
		for k := range 3 {
			erfaV := pmr2*math.Cos(dec2)/units.RadPerMas*p2[k] + pmd2/units.RadPerMas*q2[k]
			dv[k] = out.PMRAMasYr*pOut[k] + out.PMDecMasYr*qOut[k] - erfaV
		}
		dpm := math.Sqrt(vec.Dot(dv, dv))
		if dpm > 1e-6+1e-15/math.Cos(dec2)*muAs*1000 {
			t.Fatalf("case %d: %+v: pm (%v, %v), eraPmsafe (%v, %v)", i, in, out.PMRAMasYr, out.PMDecMasYr, pmr2*math.Cos(dec2)/units.RadPerMas, pmd2/units.RadPerMas)
		}
	}
	t.Logf("worst position difference %.3g muas", worst)
}
