package weigh

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
)

func defaultModel(t testing.TB) *potential.Model {
	t.Helper()
	m, err := potential.Builtin(potential.DefaultModel)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// ejectee invents a star launched from a point uniform within 0.1 kpc of
// the centre in a random direction and flown forward 10-80 Myr in p. Its
// speed, referred by energy to ejectionDepthKpc (the fit's convention), is
// Gaussian, 1150 +- 175 km/s (mostly 800-1500); at the launch point it is
// a little lower.
func ejectee(rng *rand.Rand, p *potential.Model) (x, v [3]float64) {
	dir := randomDirection(rng)
	off := randomDirection(rng)
	r0 := 0.1 * math.Cbrt(rng.Float64())
	for k := range 3 {
		x[k] = r0 * off[k]
	}
	v0 := ejectionMeanKms + ejectionSigmaKms*rng.NormFloat64()
	speed := math.Sqrt(v0*v0 - 2*(p.Phi(x)-p.Phi([3]float64{ejectionDepthKpc, 0, 0})))
	for k := range 3 {
		v[k] = speed * dir[k]
	}
	return orbit.Advance(p, x, v, 10+70*rng.Float64(), orbit.Options{})
}

func randomDirection(rng *rand.Rand) [3]float64 {
	z := 2*rng.Float64() - 1
	phi := 2 * math.Pi * rng.Float64()
	s := math.Sqrt(1 - z*z)
	return [3]float64{s * math.Cos(phi), s * math.Sin(phi), z}
}

// draws scatters n Monte Carlo draws around (x, v) with fractional Gaussian
// errors fracX on each position axis and fracV on each velocity axis,
// relative to |x| and |v|.
func draws(rng *rand.Rand, id string, x, v [3]float64, n int, fracX, fracV float64) OrbitStar {
	sx := fracX * math.Sqrt(x[0]*x[0]+x[1]*x[1]+x[2]*x[2])
	sv := fracV * math.Sqrt(v[0]*v[0]+v[1]*v[1]+v[2]*v[2])
	s := OrbitStar{ID: id}
	for range n {
		var xs, vs [3]float64
		for k := range 3 {
			xs[k] = x[k] + sx*rng.NormFloat64()
			vs[k] = v[k] + sv*rng.NormFloat64()
		}
		s.PosKpc = append(s.PosKpc, xs)
		s.VelKms = append(s.VelKms, vs)
	}
	return s
}

// ejecteeSet invents nStars ejectees in the default model with its halo
// scaled by trueScale, each with nDraws draws.
func ejecteeSet(t testing.TB, rng *rand.Rand, trueScale float64, nStars, nDraws int, fracX, fracV float64) []OrbitStar {
	t.Helper()
	truth, err := ScaleHalo(defaultModel(t), trueScale)
	if err != nil {
		t.Fatal(err)
	}
	out := make([]OrbitStar, nStars)
	for i := range out {
		x, v := ejectee(rng, truth)
		out[i] = draws(rng, "ej", x, v, nDraws, fracX, fracV)
	}
	return out
}

// The speed law ejectee draws from; the ejection score is told it (a
// recovery test of the method given its ejection model). A smooth law: a
// box law's walls make the likelihood non-regular, and Wilks intervals
// undercovered in our trials (3 of 10 seeds at a true scale of 2, measured
// with an earlier, fixed-width form of the kernel).
const (
	ejectionMeanKms  = 1150.0
	ejectionSigmaKms = 175.0
)

func ejectionOptions() OrbitOptions {
	return OrbitOptions{Score: ScoreEjection, EjectionSpeedPDF: GaussianSpeedPDF(ejectionMeanKms, ejectionSigmaKms)}
}

func TestScaledHalo(t *testing.T) {
	base := defaultModel(t)
	m, err := ScaleHalo(base, 2.5)
	if err != nil {
		t.Fatal(err)
	}
	bc, mc := base.Components(), m.Components()
	for i := range bc {
		want := bc[i]
		if want.Kind == potential.KindNFW {
			want.MassMsun *= 2.5
		}
		if mc[i] != want {
			t.Errorf("component %d: got %+v, want %+v", i, mc[i], want)
		}
	}
	// The halo's share of the force at 50 kpc grows by the factor.
	x := [3]float64{30, 0, 40}
	halo := func(p *potential.Model) float64 {
		var cs []potential.Component
		for _, c := range p.Components() {
			if c.Kind == potential.KindNFW {
				cs = append(cs, c)
			}
		}
		h, err := potential.New(cs)
		if err != nil {
			t.Fatal(err)
		}
		return h.Accel(x)[0]
	}
	if r := halo(m) / halo(base); math.Abs(r-2.5) > 1e-12 {
		t.Errorf("halo force ratio %v, want 2.5", r)
	}
	noHalo, _ := potential.New(bc[:2])
	if _, err := ScaleHalo(noHalo, 2); !errors.Is(err, ErrNoNFW) {
		t.Errorf("model without nfw: err %v, want ErrNoNFW", err)
	}
}

// A ln L parabola in ln(scale) with curvature 1/sigma^2 has its
// Delta(-2 ln L) = 1 points at s0 exp(+-sigma) and 2.71 points at
// s0 exp(+-1.645 sigma) (common practice); a fine grid must find them.
func TestProfileIntervals(t *testing.T) {
	s0, sigma := 1.3, 0.2
	r := &OrbitResult{Scales: LogScales(0.3, 3, 201)}
	for _, s := range r.Scales {
		d := math.Log(s/s0) / sigma
		r.LogLike = append(r.LogLike, -0.5*d*d)
	}
	r.profile()
	z90 := math.Sqrt(delta2LogL90)
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"best", r.Best, s0}, {"lo68", r.Lo68, s0 * math.Exp(-sigma)}, {"hi68", r.Hi68, s0 * math.Exp(sigma)},
		{"lo90", r.Lo90, s0 * math.Exp(-z90*sigma)}, {"hi90", r.Hi90, s0 * math.Exp(z90*sigma)},
	} {
		if math.Abs(math.Log(c.got/c.want)) > 0.006 {
			t.Errorf("%s = %.4f, want %.4f", c.name, c.got, c.want)
		}
	}
	if r.AtEdge || r.Open68 || r.Open90 {
		t.Errorf("interior maximum flagged at edge: %+v", r)
	}
	// A monotonic curve: the maximum is at the edge and the interval open.
	for k := range r.LogLike {
		r.LogLike[k] = float64(k)
	}
	r.profile()
	if !r.AtEdge || !r.Open90 || r.Hi90 != 3 || r.Best != 3 {
		t.Errorf("monotonic curve: best %v edge %v open %v hi90 %v", r.Best, r.AtEdge, r.Open90, r.Hi90)
	}
}

// The kernel density at the centre of many crossings drawn from a 2-D
// Gaussian N(m, S) approaches the density of N(m, S + H) there (a Gaussian
// convolved with a Gaussian kernel); with half the draws uncrossed it halves.
func TestDensityAtCentre(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 1))
	const n = 20000
	mx, my, sx, sy, rho := 0.8, -0.5, 1.2, 0.6, 0.4
	var ds []draw
	for range n {
		a, b := rng.NormFloat64(), rng.NormFloat64()
		ds = append(ds, draw{xKpc: mx + sx*a, yKpc: my + sy*(rho*a+math.Sqrt(1-rho*rho)*b), weight: 1})
	}
	c := newCloud(ds, n, 0.01)
	f := math.Pow(n, -1.0/3)
	sxx, syy, sxy := (1+f)*sx*sx, (1+f)*sy*sy, (1+f)*rho*sx*sy
	det := sxx*syy - sxy*sxy
	q := (syy*mx*mx - 2*sxy*mx*my + sxx*my*my) / det
	want := math.Exp(-0.5*q) / (2 * math.Pi * math.Sqrt(det))
	if got := c.densityAtCentre(); math.Abs(got/want-1) > 0.03 {
		t.Errorf("density %v, want %v", got, want)
	}
	half := newCloud(ds[:n/2], n, 0.01)
	if got := half.densityAtCentre(); math.Abs(got/(want/2)-1) > 0.04 {
		t.Errorf("half crossed: density %v, want %v", got, want/2)
	}
}

// (c) selection: a disk star with small errors crosses the plane near
// R = 8 kpc under every grid model and is not a candidate ejectee, while
// ejectees with the same errors are.
func TestSelection(t *testing.T) {
	base := defaultModel(t)
	truth, _ := ScaleHalo(base, 1)
	rng := rand.New(rand.NewPCG(11, 2))
	x, v := orbit.Advance(truth, [3]float64{8, 0, 0}, [3]float64{-500, 220, 300}, 40, orbit.Options{})
	stars := []OrbitStar{draws(rng, "disk", x, v, 40, 0.02, 0.01)}
	stars = append(stars, ejecteeSet(t, rng, 1, 5, 40, 0.02, 0.01)...)
	res, err := FitOrbits(context.Background(), base, stars, ejectionOptions())
	if err != nil {
		t.Fatal(err)
	}
	if res.Selected[0] {
		t.Errorf("disk star selected")
	}
	for i := 1; i < len(stars); i++ {
		if !res.Selected[i] {
			t.Errorf("ejectee %d not selected", i)
		}
	}
	if res.Stars != len(stars)-1 {
		t.Errorf("Stars = %d, want %d", res.Stars, len(stars)-1)
	}
	if _, err := FitOrbits(context.Background(), base, stars[:1], ejectionOptions()); !errors.Is(err, ErrNoEjectees) {
		t.Errorf("disk star alone: err %v, want ErrNoEjectees", err)
	}
}

// swing is how much a ln L curve varies over the grid.
func swing(row []float64) float64 {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range row {
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	return hi - lo
}

// (b) a fast disk runaway (born at R = 8 kpc, kicked to about 650 km/s,
// flown 20 Myr) observed with 3 per cent errors is selected, its crossing
// cloud barely reaching the centre; without the background term its ln L
// swings by several units over the grid and drags the maximum, with it the
// background caps it and the maximum stays within a grid step.
func TestRunawayAmongEjectees(t *testing.T) {
	base := defaultModel(t)
	truth, _ := ScaleHalo(base, 1)
	rng := rand.New(rand.NewPCG(5, 6))
	x, v := orbit.Advance(truth, [3]float64{8, 0, 0}, [3]float64{-600, 220, 100}, 20, orbit.Options{})
	runaway := draws(rng, "runaway", x, v, 40, 0.03, 0.03)
	ej := ejecteeSet(t, rng, 1, 20, 40, 0.02, 0.01)
	fit := func(stars []OrbitStar, noBg bool) *OrbitResult {
		opt := ejectionOptions()
		opt.NoBackground = noBg
		res, err := FitOrbits(context.Background(), base, stars, opt)
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	withRunaway := append([]OrbitStar{runaway}, ej...)
	clean, mixed := fit(ej, false), fit(withRunaway, false)
	cleanBare, bare := fit(ej, true), fit(withRunaway, true)
	if !mixed.Selected[0] || !bare.Selected[0] {
		t.Fatalf("runaway not selected: the test needs it inside the fit")
	}
	step := math.Log(clean.Scales[1] / clean.Scales[0])
	moved := math.Abs(math.Log(mixed.Best/clean.Best)) / step
	movedBare := math.Abs(math.Log(bare.Best/cleanBare.Best)) / step
	t.Logf("runaway ln L swing %.2f with background, %.2f without; best %.3f -> %.3f with, %.3f -> %.3f without",
		swing(mixed.PerStar[0]), swing(bare.PerStar[0]), clean.Best, mixed.Best, cleanBare.Best, bare.Best)
	if moved > 1.01 {
		t.Errorf("with background the runaway moved the maximum by %.1f grid steps", moved)
	}
	if movedBare <= 1.01 {
		t.Errorf("without background the runaway should move the maximum, moved %.1f grid steps", movedBare)
	}
}

// The crossing score alone cannot weigh a spherical halo (FitOrbits,
// LIMITATION): few stars' ln L moves by 0.5 over a factor ten in M_s, and
// the focusing puts the maximum at the heavy edge even for a light truth.
// Should the score become informative this test fails and the
// documentation must change with it.
func TestCrossingScoreBlindToHaloMass(t *testing.T) {
	base := defaultModel(t)
	rng := rand.New(rand.NewPCG(3, 50))
	stars := ejecteeSet(t, rng, 0.5, 20, 40, 0.02, 0.01)
	res, err := FitOrbits(context.Background(), base, stars, OrbitOptions{Score: ScoreCrossings})
	if err != nil {
		t.Fatal(err)
	}
	if res.Carrying > res.Stars/5 {
		t.Errorf("%d of %d stars carry the crossing score", res.Carrying, res.Stars)
	}
	if res.Best != res.Scales[len(res.Scales)-1] {
		t.Errorf("crossing score best %.3f for truth 0.5, expected the heavy edge", res.Best)
	}
	t.Logf("truth 0.5: crossing score best %.3f, 90%% [%.3f, %.3f], carrying %d of %d", res.Best, res.Lo90, res.Hi90, res.Carrying, res.Stars)
}

// (a) recovery: ejectees launched from within 0.1 kpc of the centre at
// 1150 +- 175 km/s (ejectee), flown 10-80 Myr in the default model with its halo scaled
// by a true factor, observed with 2 per cent position and 1 per cent
// velocity errors per axis (a precise-astrometry case), 25 stars of 40
// draws, fitted with the ejection score that knows their speed law. For
// each true scale the 90 per cent interval must contain it in at least 8
// of 10 seeds, and the light (0.5) and heavy (2) halos be told apart: the
// light fit's best below the heavy one's in at least 8 of 10 paired seeds.
func TestFitOrbitsRecovery(t *testing.T) {
	if testing.Short() {
		t.Skip("recovery: about 30 fits")
	}
	const seeds = 10
	base := defaultModel(t)
	start := time.Now()
	best := map[float64][]float64{}
	for _, truth := range []float64{0.5, 1, 2} {
		covered := 0
		for seed := range uint64(seeds) {
			rng := rand.New(rand.NewPCG(1000+seed, uint64(truth*1000)))
			stars := ejecteeSet(t, rng, truth, 25, 40, 0.02, 0.01)
			res, err := FitOrbits(context.Background(), base, stars, ejectionOptions())
			if err != nil {
				t.Fatal(err)
			}
			if res.Lo90 <= truth && truth <= res.Hi90 {
				covered++
			}
			best[truth] = append(best[truth], res.Best)
			t.Logf("truth %.1f seed %d: best %.3f 68%% [%.3f, %.3f] 90%% [%.3f, %.3f] edge %v, %d stars, %d carrying",
				truth, seed, res.Best, res.Lo68, res.Hi68, res.Lo90, res.Hi90, res.AtEdge, res.Stars, res.Carrying)
		}
		t.Logf("truth %.1f: 90%% interval covers it in %d of %d seeds", truth, covered, seeds)
		if covered < 8 {
			t.Errorf("truth %.1f covered in %d of %d seeds, want >= 8", truth, covered, seeds)
		}
	}
	ordered := 0
	for k := range seeds {
		if best[0.5][k] < best[2][k] {
			ordered++
		}
	}
	t.Logf("light best below heavy best in %d of %d seeds; %v", ordered, seeds, time.Since(start).Round(time.Millisecond))
	if ordered < 8 {
		t.Errorf("light and heavy halo ordered in %d of %d seeds, want >= 8", ordered, seeds)
	}
}

// selectedShare against its closed form for a uniform ejection law on
// [a, b]: N = (1/(b-a)) integral of dv0 / sqrt(v0^2 - 2 dPhi) over v0 from
// max(a, sqrt(vMin^2 + 2 dPhi)) to b, = (1/(b-a)) [acosh(v0/sqrt(2 dPhi))]
// (ln(b/lo) when dPhi = 0).
func TestSelectedShareClosedForm(t *testing.T) {
	const a, b = 700.0, 1800.0
	pdf := UniformSpeedPDF(a, b)
	for _, c := range []struct{ dPhi, vMin float64 }{{0, 450}, {300 * 300, 450}, {600 * 600, 450}, {600 * 600, 0}, {900 * 900, 450}} {
		lo := math.Max(a, math.Sqrt(c.vMin*c.vMin+2*c.dPhi))
		want := math.Log(b / lo)
		if c.dPhi > 0 {
			s := math.Sqrt(2 * c.dPhi)
			want = math.Acosh(b/s) - math.Acosh(lo/s)
		}
		want /= b - a
		got := selectedShare(c.dPhi, c.vMin, pdf)
		// The trapezoid rule on a law with jumps: 2 km/s steps, errors of
		// order step/(b-a) of the whole.
		if math.Abs(got-want) > 3e-3*want+1e-9 {
			t.Errorf("dPhi %g, vMin %g: %.6g, closed form %.6g", c.dPhi, c.vMin, got, want)
		}
	}
}

// Ejectees selected by their present speed (>= 900 km/s, a cut that keeps
// fewer of them the heavier the halo, as the caller's median-speed cut
// does): with the selection's normalisation (SelectMinSpeedKms) the 90 per
// cent interval holds the true scale in at least 4 of 5 seeds at 0.5 and
// at 2. Without it the same stars pin the fit to the grid's lightest halo
// and exclude the truth 2 in 5 of 5 seeds (measured 2026-12-03: 90% upper
// bounds 0.62-0.86; with it 5 of 5 at both truths). The unnormalised fit
// is logged, not asserted.
func TestFitOrbitsSpeedSelection(t *testing.T) {
	if testing.Short() {
		t.Skip("20 fits")
	}
	const vSel, seeds = 900.0, 5
	base := defaultModel(t)
	for _, truth := range []float64{0.5, 2} {
		m, err := ScaleHalo(base, truth)
		if err != nil {
			t.Fatal(err)
		}
		covered := 0
		for seed := range uint64(seeds) {
			rng := rand.New(rand.NewPCG(5000+seed, uint64(truth*1000)))
			var stars []OrbitStar
			tried := 0
			for len(stars) < 25 {
				tried++
				x, v := ejectee(rng, m)
				if math.Sqrt(v[0]*v[0]+v[1]*v[1]+v[2]*v[2]) < vSel {
					continue
				}
				stars = append(stars, draws(rng, "ej", x, v, 40, 0.02, 0.01))
			}
			for _, sel := range []float64{0, vSel} {
				o := ejectionOptions()
				o.SelectMinSpeedKms = sel
				res, err := FitOrbits(context.Background(), base, stars, o)
				if err != nil {
					t.Fatal(err)
				}
				t.Logf("truth %.1f seed %d, normalised over v >= %.0f km/s (0: not): %d of %d kept, best %.2f 90%% [%.2f, %.2f], %d carrying",
					truth, seed, sel, len(stars), tried, res.Best, res.Lo90, res.Hi90, res.Carrying)
				if sel > 0 && res.Lo90 <= truth && truth <= res.Hi90 {
					covered++
				}
			}
		}
		if covered < 4 {
			t.Errorf("truth %.1f: the normalised fit's 90%% interval holds it in %d of %d seeds, want >= 4", truth, covered, seeds)
		}
	}
}
