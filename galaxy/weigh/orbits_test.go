package weigh

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"sort"
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
// speed, referred by energy to EjectionDepthKpc (the fit's convention), is
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
	speed := math.Sqrt(v0*v0 - 2*(p.Phi(x)-p.Phi([3]float64{EjectionDepthKpc, 0, 0})))
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
// relative to |x| and |v|; each draw's velocity law is N(v, (fracV |v|)^2 I),
// whatever its position.
func draws(rng *rand.Rand, id string, x, v [3]float64, n int, fracX, fracV float64) OrbitStar {
	sx := fracX * math.Sqrt(x[0]*x[0]+x[1]*x[1]+x[2]*x[2])
	sv := fracV * math.Sqrt(v[0]*v[0]+v[1]*v[1]+v[2]*v[2])
	s := OrbitStar{ID: id}
	cov := [3][3]float64{{sv * sv, 0, 0}, {0, sv * sv, 0}, {0, 0, sv * sv}}
	for range n {
		var xs, vs [3]float64
		for k := range 3 {
			xs[k] = x[k] + sx*rng.NormFloat64()
			vs[k] = v[k] + sv*rng.NormFloat64()
		}
		s.PosKpc = append(s.PosKpc, xs)
		s.VelKms = append(s.VelKms, vs)
		s.VelMeanKms = append(s.VelMeanKms, v)
		s.VelCovKms2 = append(s.VelCovKms2, cov)
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
	return OrbitOptions{Score: ScoreEjection, Ejection: &fixtureEjection}
}

// fixtureEjection is the ejection model of ejectee: the Gaussian speed law
// (truncated where it is negligible, beyond 4 sigma) and flights of 10-80
// Myr.
var fixtureEjection = EjectionModel{SpeedMinKms: ejectionMeanKms - 4*ejectionSigmaKms, SpeedMaxKms: ejectionMeanKms + 4*ejectionSigmaKms,
	SpeedMeanKms: ejectionMeanKms, SpeedSigmaKms: ejectionSigmaKms, FlightMinMyr: 10, FlightMaxMyr: 80}

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
// ejectees with the same errors are (without the radius cut); with the
// default cut, exactly the stars whose median draw lies beyond
// DefaultOrbitMaxRadiusKpc are left out and marked Far (one of these
// ejectees lies beyond it).
func TestSelection(t *testing.T) {
	base := defaultModel(t)
	truth, _ := ScaleHalo(base, 1)
	rng := rand.New(rand.NewPCG(11, 2))
	x, v := orbit.Advance(truth, [3]float64{8, 0, 0}, [3]float64{-500, 220, 300}, 40, orbit.Options{})
	stars := []OrbitStar{draws(rng, "disk", x, v, 40, 0.02, 0.01)}
	stars = append(stars, ejecteeSet(t, rng, 1, 5, 40, 0.02, 0.01)...)
	opt := ejectionOptions()
	opt.MaxRadiusKpc = -1
	res, err := FitOrbits(context.Background(), base, stars, opt)
	if err != nil {
		t.Fatal(err)
	}
	cut, err := FitOrbits(context.Background(), base, stars, ejectionOptions())
	if err != nil {
		t.Fatal(err)
	}
	nFar := 0
	for i := range stars {
		far := medianRadiusKpc(&stars[i]) > DefaultOrbitMaxRadiusKpc
		if far {
			nFar++
		}
		if cut.Far[i] != far || res.Far[i] {
			t.Errorf("star %d: Far %v with the cut, %v without; beyond %g kpc: %v", i, cut.Far[i], res.Far[i], DefaultOrbitMaxRadiusKpc, far)
		}
		if want := res.Selected[i] && !far; cut.Selected[i] != want {
			t.Errorf("star %d: selected %v with the cut, want %v", i, cut.Selected[i], want)
		}
	}
	if nFar == 0 {
		t.Errorf("no star beyond %g kpc: the cut is not exercised", DefaultOrbitMaxRadiusKpc)
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
// cloud barely reaching the centre; without the background term it alone
// moves the maximum by more than a grid step, with it the background caps
// its ln L's swing below 1 and the maximum stays within a grid step.
// Before the ejection score weighed the direction (fitRadial), this
// runaway's ln L was -Inf where its full speed could not come from the
// ejection model, and the test asked for a swing above 3 without the
// background; now that no radial velocity explains its motion well, its
// swing without the background is 2.4 and what it would do to the fit is
// measured by where the maximum goes. With the background it swung by
// 0.07 then and moved the maximum by one step; now 0.00 and none.
// Not covered (measured, 2026-12-04): a runaway whose path runs through
// the central kiloparsec and out along its radius is an ejectee in all but
// its birthplace; it swings ln L by more than 6 under either score.
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
		opt.Refine = 1 // grid steps below are the trace grid's
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
		t.Errorf("without background the runaway should move the maximum by more than a grid step, moved it %.1f (its ln L swung %.2f)", movedBare, swing(bare.PerStar[0]))
	}
	if swing(mixed.PerStar[0]) >= 1 {
		t.Errorf("with background the runaway's ln L swings by %.2f, want < 1", swing(mixed.PerStar[0]))
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

// Ejectees selected by their present speed (>= 900 km/s, a cut that keeps
// fewer of them the heavier the halo, as the caller's median-speed cut
// does): with the selection's normalisation (SelectMinSpeedKms) the 90 per
// cent interval holds the true scale in at least 4 of 5 seeds at 0.5 and
// at 2. Normalised over all speeds instead (SelectMinSpeedKms = 0) the
// same stars pull the fit to the light end of the grid and exclude the
// truth 2 in 5 of 5 seeds (measured 2026-12-03 with the flight-time term:
// 90% upper bounds 0.77-1.55; with the cut's normalisation 5 of 5 at both
// truths). The fit without the cut is logged, not asserted.
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

// sphericalModel is the default model without its disk: rays from the
// centre are then exact radial orbits.
func sphericalModel(t testing.TB) *potential.Model {
	t.Helper()
	var cs []potential.Component
	for _, c := range defaultModel(t).Components() {
		if c.Kind != potential.KindMiyamotoNagai {
			cs = append(cs, c)
		}
	}
	m, err := potential.New(cs)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// The ray's flight time: exact (r - r_ej)/v0 in a flat potential, and in
// the default model within 1 per cent of a 20,000-interval midpoint sum
// (our accuracy claim at rayNodes) for speeds from 300 km/s at the star.
func TestRayFlightTime(t *testing.T) {
	flat, _ := potential.New(nil)
	if flat != nil {
		r := newRay(flat, [3]float64{30, 40, 0})
		want := (50 - EjectionDepthKpc) / 1000 * potential.TimeUnitMyr
		if got := r.flightMyr(1000); math.Abs(got/want-1) > 1e-12 {
			t.Errorf("flat potential: %v Myr, want %v", got, want)
		}
	}
	p := defaultModel(t)
	for _, c := range []struct {
		x    [3]float64
		vKms float64 // speed at x
	}{{[3]float64{-8, 0, 0.1}, 300}, {[3]float64{5, 20, 30}, 500}, {[3]float64{-60, 50, -90}, 800}, {[3]float64{0, 1, 12}, 1500}} {
		r := newRay(p, c.x)
		v0 := math.Sqrt(c.vKms*c.vKms + 2*r.end())
		d := math.Sqrt(c.x[0]*c.x[0] + c.x[1]*c.x[1] + c.x[2]*c.x[2])
		phi0 := p.Phi([3]float64{EjectionDepthKpc * c.x[0] / d, EjectionDepthKpc * c.x[1] / d, EjectionDepthKpc * c.x[2] / d})
		const n = 20000
		var want float64
		for k := range n {
			// Midpoints in ln r, dr = r d(ln r).
			lr := math.Log(EjectionDepthKpc) + (float64(k)+0.5)/n*math.Log(d/EjectionDepthKpc)
			rk := math.Exp(lr)
			dPhi := p.Phi([3]float64{rk * c.x[0] / d, rk * c.x[1] / d, rk * c.x[2] / d}) - phi0
			want += rk / math.Sqrt(v0*v0-2*dPhi)
		}
		want *= math.Log(d/EjectionDepthKpc) / n * potential.TimeUnitMyr
		if got := r.flightMyr(v0); math.Abs(got/want-1) > 0.01 {
			t.Errorf("x %v, v %v: %.4f Myr, fine sum %.4f", c.x, c.vKms, got, want)
		}
	}
}

// ejectionNorm against a direct sum over the present speed v of
// f(v0)/v0 [t in window] dv (the definition), for the uniform law (closed
// form in u = ln(v0 + v)) and the Gaussian one (Simpson in u), with and
// without a binding flight-time window.
func TestEjectionNorm(t *testing.T) {
	p := defaultModel(t)
	for _, e := range []EjectionModel{DefaultEjection, fixtureEjection,
		{SpeedMinKms: 700, SpeedMaxKms: 1800, FlightMaxMyr: 1e9}} {
		for _, x := range [][3]float64{{-8, 0, 0.1}, {20, -30, 40}, {100, 80, -120}} {
			r := newRay(p, x)
			for _, vSel := range []float64{0, 450, 900} {
				got := ejectionNorm(&e, &r, vSel)
				const step = 0.05
				var want float64
				for v := vSel + step/2; v < 4000; v += step {
					v0 := math.Sqrt(v*v + 2*r.end())
					if tm := r.flightMyr(v0); tm >= e.FlightMinMyr && tm <= e.FlightMaxMyr {
						want += e.SpeedPDF(v0) / v0 * step
					}
				}
				if math.Abs(got-want) > 2e-3*want+1e-12 {
					t.Errorf("%+v at %v, vSel %v: N %.6g, direct sum %.6g", e, x, vSel, got, want)
				}
			}
		}
	}
}

// The derivation of ejectionDensity checked by simulation: stars leave the
// centre of a spherical potential on radial orbits at a constant rate
// (flight times uniform on DefaultEjection's window) with its speed law, are
// flown by a leapfrog in time (independent of the ray's quadrature), and
// those found beyond 5 kpc at >= 450 km/s are kept. If p(v | r) is right,
// each kept star's probability integral transform F(v_i | r_i) is uniform:
// the Kolmogorov-Smirnov distance must stay below 1.63/sqrt(n), its 1 per
// cent critical value (common practice).
func TestEjectionDensityBySimulation(t *testing.T) {
	if testing.Short() {
		t.Skip("flies 6000 radial orbits")
	}
	p := sphericalModel(t)
	e := DefaultEjection
	rng := rand.New(rand.NewPCG(21, 4))
	const vSel, dtMyr = 450.0, 0.1
	var pit []float64
	for range 6000 {
		v0, tf := e.SampleSpeed(rng), e.SampleFlightMyr(rng)
		dir := randomDirection(rng)
		r, v := EjectionDepthKpc, v0
		dt := dtMyr / potential.TimeUnitMyr
		steps := int(tf / dtMyr)
		acc := func(r float64) float64 {
			a := p.Accel([3]float64{r * dir[0], r * dir[1], r * dir[2]})
			return a[0]*dir[0] + a[1]*dir[1] + a[2]*dir[2]
		}
		for k := range steps {
			h := dt
			if k == steps-1 {
				h = tf/potential.TimeUnitMyr - dt*float64(steps-1)
			}
			v += 0.5 * h * acc(r)
			r += h * v
			v += 0.5 * h * acc(r)
		}
		if r < 5 || v < vSel {
			continue
		}
		x := [3]float64{r * dir[0], r * dir[1], r * dir[2]}
		ry := newRay(p, x)
		// The normalisation cancels in the ratio; ejectionNorm has its
		// own test.
		var below, all float64
		for w := vSel + 0.25; w < 3000; w += 0.5 {
			d := ejectionShape(&e, &ry, w)
			all += d
			if w < v {
				below += d
			}
		}
		if all > 0 {
			pit = append(pit, below/all)
		}
	}
	sort.Float64s(pit)
	n := float64(len(pit))
	var dMax float64
	for i, u := range pit {
		dMax = math.Max(dMax, math.Max(math.Abs(u-float64(i)/n), math.Abs(float64(i+1)/n-u)))
	}
	var dec [10]int
	for _, u := range pit {
		dec[min(int(10*u), 9)]++
	}
	t.Logf("%d stars kept; KS distance %.4f, 1%% critical %.4f; deciles %v", len(pit), dMax, 1.63/math.Sqrt(n), dec)
	if len(pit) < 1000 || dMax > 1.63/math.Sqrt(n) {
		t.Errorf("%d stars, KS distance %.4f > %.4f: p(v | r) does not describe the simulated ejectees", len(pit), dMax, 1.63/math.Sqrt(n))
	}
}

// A ray scaled from the rays at halo scales 1 and 2 is the ray under the
// scaled model (the potential is linear in the NFW mass, ScaleHalo).
func TestRayScaled(t *testing.T) {
	base := defaultModel(t)
	twice, err := ScaleHalo(base, 2)
	if err != nil {
		t.Fatal(err)
	}
	x := [3]float64{-12, 5, 30}
	r1, r2 := newRay(base, x), newRay(twice, x)
	for _, sc := range []float64{0.3, 0.77, 3} {
		m, err := ScaleHalo(base, sc)
		if err != nil {
			t.Fatal(err)
		}
		want, got := newRay(m, x), r1.scaled(&r2, sc)
		for j := range rayNodes {
			if math.Abs(got.dPhi[j]-want.dPhi[j]) > 1e-9*math.Abs(want.dPhi[j])+1e-6 {
				t.Fatalf("scale %v node %d: dPhi %v, want %v", sc, j, got.dPhi[j], want.dPhi[j])
			}
		}
		if math.Abs(got.dPhiMax-want.dPhiMax) > 1e-9*want.dPhiMax+1e-6 || got.rKpc != want.rKpc {
			t.Errorf("scale %v: dPhiMax %v, want %v", sc, got.dPhiMax, want.dPhiMax)
		}
	}
}

// Swing on rows worked by hand (ours): the largest less the smallest ln L
// and the scale of the largest; a row that is -Inf somewhere swings by
// +Inf, as without the background.
func TestSwing(t *testing.T) {
	r := &OrbitResult{Scales: []float64{0.5, 1, 2}, PerStar: [][]float64{{-3, -1, -2.5}, {math.Inf(-1), -1, -1.2}, {}}}
	if s, b := r.Swing(0); s != 2 || b != 1 {
		t.Errorf("row 0: swing %v at %v, want 2 at 1", s, b)
	}
	if s, b := r.Swing(1); !math.IsInf(s, 1) || b != 1 {
		t.Errorf("row 1: swing %v at %v, want +Inf at 1", s, b)
	}
	if s, b := r.Swing(2); s != 0 || !math.IsNaN(b) {
		t.Errorf("empty row: swing %v at %v, want 0 at NaN", s, b)
	}
}
