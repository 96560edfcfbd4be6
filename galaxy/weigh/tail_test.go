package weigh

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"starvet/galaxy/frames"
)

// drawLT draws a speed from f(v | vEsc, k) on (vMin, vEsc) by inverting its
// CDF F(v) = 1 - ((vEsc - v)/(vEsc - vMin))^(k+1) (integrated from Leonard
// & Tremaine 1990, ApJ 353, 486).
func drawLT(rng *rand.Rand, vEscKms, k, vMinKms float64) float64 {
	return vEscKms - (vEscKms-vMinKms)*math.Pow(1-rng.Float64(), 1/(k+1))
}

// exactStars: n stars, one exact draw each (Scale nil).
func exactStars(rng *rand.Rand, n int, vEscKms, k, vMinKms float64) []TailStar {
	st := make([]TailStar, n)
	for i := range st {
		st[i] = TailStar{SpeedKms: []float64{drawLT(rng, vEscKms, k, vMinKms)}}
	}
	return st
}

func covers(iv Interval, x float64) (in68, in90 bool) {
	return iv.Lo68 <= x && x <= iv.Hi68, iv.Lo90 <= x && x <= iv.Hi90
}

// TestTailLikelihoodMatchesDirect: the grid log-likelihood (products over
// the k grid, underflow folding) equals a direct evaluation of the mixture
// of Leonard & Tremaine (1990, ApJ 353, 486) and the truncated-normal
// outlier density (Williams et al. 2017, MNRAS 468, 2359) at sampled nodes.
func TestTailLikelihoodMatchesDirect(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	opt := DefaultTailOptions()
	var stars []TailStar
	for i := range 40 {
		st := TailStar{}
		for range 7 {
			s := 0.8 + 0.4*rng.Float64()
			st.SpeedKms = append(st.SpeedKms, 250+400*rng.Float64())
			st.Scale = append(st.Scale, s)
			if i%2 == 1 {
				st.Weight = append(st.Weight, 0.5+rng.Float64())
			}
		}
		stars = append(stars, st)
	}
	d, err := prepare(stars, &opt)
	if err != nil {
		t.Fatal(err)
	}
	g := logLikelihood(d, &opt)
	nK, nF := len(g.k), len(g.f)
	sigma := opt.OutlierSigmaKms
	// Truncated normal by its closed form, independent of gonum.
	gOut := func(v float64) float64 {
		return math.Exp(-v*v/(2*sigma*sigma)) / (sigma * math.Sqrt(math.Pi/2)) / math.Erfc(opt.VMinKms/(sigma*math.Sqrt2))
	}
	for range 60 {
		j, ik, iF := rng.IntN(len(g.vEsc)), rng.IntN(nK), rng.IntN(nF)
		v0, k, f := g.vEsc[j], g.k[ik], g.f[iF]
		var want float64
		for _, st := range stars {
			var L float64
			for dd, v := range st.SpeedKms {
				if v <= opt.VMinKms {
					continue
				}
				ve := v0 * st.Scale[dd]
				var lt float64
				if v < ve {
					lt = (k + 1) * math.Pow(ve-v, k) / math.Pow(ve-opt.VMinKms, k+1)
				}
				w := 1.0
				if st.Weight != nil {
					w = st.Weight[dd]
				}
				L += w * ((1-f)*lt + f*gOut(v))
			}
			want += math.Log(L / float64(len(st.SpeedKms)))
		}
		got := g.logL[(j*nK+ik)*nF+iF]
		if math.IsInf(want, -1) && math.IsInf(got, -1) {
			continue
		}
		if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("v0=%v k=%v f=%v: logL %v, direct %v", v0, k, f, got, want)
		}
	}
}

// coverage fits 200 exact stars from f(v | vTrue, k) with v_min = 300 for
// each of the seeds, k from kOf, and returns the percentages of seeds whose
// 68 and 90 per cent intervals cover vTrue.
func coverage(t *testing.T, seeds uint64, vTrue float64, kOf func(*rand.Rand) float64, opt TailOptions) (c68, c90 float64) {
	t.Helper()
	var n68, n90 int
	for seed := range seeds {
		rng := rand.New(rand.NewPCG(seed, 0x7a11))
		k := kOf(rng)
		r, err := FitTail(exactStars(rng, 200, vTrue, k, opt.VMinKms), opt)
		if err != nil {
			t.Fatal(err)
		}
		a, b := covers(r.VEscKms, vTrue)
		if a {
			n68++
		}
		if b {
			n90++
		}
	}
	return 100 * float64(n68) / float64(seeds), 100 * float64(n90) / float64(seeds)
}

// TestTailCoverage: v_esc = 550 km/s, v_min = 300, 200 exact stars, 400
// seeds; the 68 and 90 per cent credible intervals must cover 550 in
// 68 +- 5 and 90 +- 4 per cent of seeds. Bayesian intervals have their
// nominal frequentist coverage when the truth is drawn from the prior
// (common practice), so two honest setups are checked:
//   - known slope: data from k = 3, fitted with the prior k = 3 exactly;
//   - default prior: k drawn per seed from the default prior U[2.3, 3.7]
//     (Piffl et al. 2014, A&A 562, A91) and fitted with that prior.
//
// With k fixed at 3, the middle of the default prior, the slope is barely
// constrained by 200 stars and the k-v_esc degeneracy widens the interval
// for every k in the prior, so the intervals over-cover (measured: 87.2
// and 99.2 per cent); TestTailCoverageFixedKConservative pins that.
func TestTailCoverage(t *testing.T) {
	if testing.Short() {
		t.Skip("800 fits")
	}
	const seeds, vTrue = 400, 550.0
	known := DefaultTailOptions()
	known.KMin, known.KMax = 3, 3
	def := DefaultTailOptions()
	for _, c := range []struct {
		name string
		kOf  func(*rand.Rand) float64
		opt  TailOptions
	}{
		{"known k = 3", func(*rand.Rand) float64 { return 3 }, known},
		{"k from the default prior", func(r *rand.Rand) float64 { return def.KMin + (def.KMax-def.KMin)*r.Float64() }, def},
	} {
		c68, c90 := coverage(t, seeds, vTrue, c.kOf, c.opt)
		t.Logf("%s: coverage over %d seeds: 68%% interval %.1f%%, 90%% interval %.1f%%", c.name, seeds, c68, c90)
		if math.Abs(c68-68) > 5 || math.Abs(c90-90) > 4 {
			t.Errorf("%s: coverage 68%%: %.1f%% (want 68 +- 5), 90%%: %.1f%% (want 90 +- 4)", c.name, c68, c90)
		}
	}
}

// TestTailCoverageFixedKConservative: data from k = 3 fitted with the
// default prior k in [2.3, 3.7] (the setup of TestTailCoverage's comment)
// over-cover; the intervals must never under-cover beyond the binomial
// noise (68 - 5, 90 - 4 per cent; common practice) and the median must be
// unbiased to within 5 km/s on average over the seeds (the width of the
// fixed-k interval is ~40 km/s; 400 seeds bring its noise below 3 km/s).
func TestTailCoverageFixedKConservative(t *testing.T) {
	if testing.Short() {
		t.Skip("400 fits")
	}
	const seeds, vTrue = 400, 550.0
	opt := DefaultTailOptions()
	var n68, n90 int
	var sumMed float64
	for seed := range uint64(seeds) {
		rng := rand.New(rand.NewPCG(seed, 0x7a11))
		r, err := FitTail(exactStars(rng, 200, vTrue, 3, opt.VMinKms), opt)
		if err != nil {
			t.Fatal(err)
		}
		a, b := covers(r.VEscKms, vTrue)
		if a {
			n68++
		}
		if b {
			n90++
		}
		sumMed += r.VEscKms.Median
	}
	c68, c90 := 100*float64(n68)/seeds, 100*float64(n90)/seeds
	t.Logf("k = 3, default prior: coverage over %d seeds: 68%% interval %.1f%%, 90%% interval %.1f%%; mean median %.1f km/s", seeds, c68, c90, sumMed/seeds)
	if c68 < 68-5 || c90 < 90-4 {
		t.Errorf("under-coverage: 68%%: %.1f%%, 90%%: %.1f%%", c68, c90)
	}
	if math.Abs(sumMed/seeds-vTrue) > 5 {
		t.Errorf("mean median %.1f km/s, truth %v", sumMed/seeds, vTrue)
	}
}

// TestTailWidthShrinks: the 68 per cent width, averaged over 12 seeds,
// falls with sample size N = 100, 400, 1600. For an endpoint with density
// ~ (v_esc - v)^k, k = 3 > 1, the maximum-likelihood estimator is regular
// and its error falls as N^(-1/2) (Smith 1985, Biometrika 72, 67, from
// memory); an estimator driven by the few stars nearest the edge falls as
// N^(-1/(k+1)) = N^(-1/4). Each fourfold step must so shrink the width by a
// factor between 4^(-1/2) = 0.5 and 4^(-1/4) = 0.71; we allow [0.4, 0.85]
// for the seed noise of 12 fits and the bounded k prior.
func TestTailWidthShrinks(t *testing.T) {
	if testing.Short() {
		t.Skip("36 fits")
	}
	opt := DefaultTailOptions()
	var widths []float64
	for _, n := range []int{100, 400, 1600} {
		var w float64
		for seed := range uint64(12) {
			rng := rand.New(rand.NewPCG(seed, uint64(n)))
			r, err := FitTail(exactStars(rng, n, 550, 3, opt.VMinKms), opt)
			if err != nil {
				t.Fatal(err)
			}
			w += r.VEscKms.Hi68 - r.VEscKms.Lo68
		}
		widths = append(widths, w/12)
	}
	t.Logf("mean 68%% widths for N = 100, 400, 1600: %.1f, %.1f, %.1f km/s; ratios %.3f, %.3f",
		widths[0], widths[1], widths[2], widths[1]/widths[0], widths[2]/widths[1])
	for i := 1; i < len(widths); i++ {
		if r := widths[i] / widths[i-1]; !(r >= 0.4 && r <= 0.85) {
			t.Errorf("width ratio %d: %.3f, want in [0.4, 0.85]", i, r)
		}
	}
}

// TestTailOutlier: three unbound artefacts at 800-900 km/s among 200 stars
// from v_esc = 550 km/s move the median by less than the 68 per cent
// half-width with the outlier term (Williams et al. 2017, MNRAS 468,
// 2359), and by more without it (then every star must lie below v_esc0, so
// the median jumps above 900 km/s). Over 5 seeds.
func TestTailOutlier(t *testing.T) {
	on := DefaultTailOptions()
	off := on
	off.OutlierMax = 0
	for seed := range uint64(5) {
		rng := rand.New(rand.NewPCG(seed, 0xbad))
		clean := exactStars(rng, 200, 550, 3, on.VMinKms)
		dirty := append([]TailStar(nil), clean...)
		for range 3 {
			dirty = append(dirty, TailStar{ID: "artefact", SpeedKms: []float64{800 + 100*rng.Float64()}})
		}
		fit := func(st []TailStar, o TailOptions) *TailResult {
			r, err := FitTail(st, o)
			if err != nil {
				t.Fatal(err)
			}
			return r
		}
		cOn, dOn := fit(clean, on), fit(dirty, on)
		cOff, dOff := fit(clean, off), fit(dirty, off)
		half := (cOn.VEscKms.Hi68 - cOn.VEscKms.Lo68) / 2
		shiftOn := math.Abs(dOn.VEscKms.Median - cOn.VEscKms.Median)
		shiftOff := math.Abs(dOff.VEscKms.Median - cOff.VEscKms.Median)
		t.Logf("seed %d: clean median %.1f (half-width %.1f); shift with outlier term %.1f, without %.1f km/s; f_out median %.3f",
			seed, cOn.VEscKms.Median, half, shiftOn, shiftOff, dOn.OutlierFraction.Median)
		if !(shiftOn < half) {
			t.Errorf("seed %d: with the outlier term the median moved %.1f km/s, half-width %.1f", seed, shiftOn, half)
		}
		if !(shiftOff > half && shiftOff > shiftOn) {
			t.Errorf("seed %d: without the outlier term the median moved only %.1f km/s (with: %.1f, half-width %.1f)", seed, shiftOff, shiftOn, half)
		}
	}
}

// TestTailRadialScale: stars at different radii, each drawn below its own
// escape speed v0 s with s uniform in [0.75, 1.25] and k drawn per seed
// from the default prior (as in TestTailCoverage), fitted with their
// scales: the 68 and 90 per cent intervals cover v0 = 520 km/s in 68 +- 10
// and 90 +- 7 per cent of 100 seeds (two binomial standard deviations at
// 100 seeds, 4.7 and 3.0 per cent, plus slack; common practice). Fitting
// the same stars without their scales must do worse.
func TestTailRadialScale(t *testing.T) {
	if testing.Short() {
		t.Skip("200 fits")
	}
	const seeds, v0 = 100, 520.0
	opt := DefaultTailOptions()
	var n68, n90, m68 int
	for seed := range uint64(seeds) {
		rng := rand.New(rand.NewPCG(seed, 0x5ca1e))
		k := opt.KMin + (opt.KMax-opt.KMin)*rng.Float64()
		stars := make([]TailStar, 200)
		bare := make([]TailStar, 200)
		for i := range stars {
			s := 0.75 + 0.5*rng.Float64()
			v := drawLT(rng, v0*s, k, opt.VMinKms)
			stars[i] = TailStar{SpeedKms: []float64{v}, Scale: []float64{s}}
			bare[i] = TailStar{SpeedKms: []float64{v}}
		}
		r, err := FitTail(stars, opt)
		if err != nil {
			t.Fatal(err)
		}
		a, b := covers(r.VEscKms, v0)
		if a {
			n68++
		}
		if b {
			n90++
		}
		rb, err := FitTail(bare, opt)
		if err != nil {
			t.Fatal(err)
		}
		if a, _ := covers(rb.VEscKms, v0); a {
			m68++
		}
	}
	t.Logf("with scales: 68%% covers %d/%d, 90%% covers %d/%d; without scales 68%% covers %d/%d", n68, seeds, n90, seeds, m68, seeds)
	if math.Abs(float64(n68)-68) > 10 || math.Abs(float64(n90)-90) > 7 {
		t.Errorf("coverage with scales: 68%% %d/%d, 90%% %d/%d", n68, seeds, n90, seeds)
	}
	if !(m68 < n68-10) {
		t.Errorf("ignoring the scales should lose coverage: %d vs %d of %d", m68, n68, seeds)
	}
}

// TestTailDrawsFoldErrors: a star measured with Monte Carlo draws spread
// around its true speed gives a wider posterior than the same stars with
// exact speeds, and the fit still covers the truth (common practice).
func TestTailDrawsFoldErrors(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	opt := DefaultTailOptions()
	exact := exactStars(rng, 300, 550, 3, opt.VMinKms)
	noisy := make([]TailStar, len(exact))
	for i, st := range exact {
		vTrue := st.SpeedKms[0]
		obs := vTrue + 30*rng.NormFloat64()
		ds := make([]float64, 64)
		for j := range ds {
			ds[j] = obs + 30*rng.NormFloat64()
		}
		noisy[i] = TailStar{SpeedKms: ds}
	}
	re, err := FitTail(exact, opt)
	if err != nil {
		t.Fatal(err)
	}
	rn, err := FitTail(noisy, opt)
	if err != nil {
		t.Fatal(err)
	}
	we, wn := re.VEscKms.Hi90-re.VEscKms.Lo90, rn.VEscKms.Hi90-rn.VEscKms.Lo90
	t.Logf("exact: %.1f [%.1f, %.1f]; noisy: %.1f [%.1f, %.1f]", re.VEscKms.Median, re.VEscKms.Lo90, re.VEscKms.Hi90, rn.VEscKms.Median, rn.VEscKms.Lo90, rn.VEscKms.Hi90)
	if !(wn > we) {
		t.Errorf("90%% width with 30 km/s errors %.1f not above exact %.1f", wn, we)
	}
	if _, in := covers(rn.VEscKms, 550); !in {
		t.Errorf("noisy fit 90%% interval [%.1f, %.1f] misses 550", rn.VEscKms.Lo90, rn.VEscKms.Hi90)
	}
}

// TestTailDrawsOf3DVelocities: stars of an isotropic population whose
// speeds follow f(v | 550, k = 3, v_min = 300), each measured with an
// isotropic normal error of 50 km/s per component and given 64 draws of
// its velocity vector from the flat-prior likelihood (obs + error), the
// stars entering on their true speed > v_min, k known. Through
// NewTailStar's weights the fit is the exact posterior, so over 40 seeds
// the mean median must lie within 10 km/s of 550 (the 68 per cent width
// is ~40 km/s; 40 seeds bring its noise to ~3 km/s) and the 90 per cent
// interval cover 550 in at least 80 per cent of seeds (90 per cent less 2
// binomial standard deviations of 4.7 per cent; common practice). With
// every weight 1 (the shell volume of velocity space left in the average)
// the same 40 fits gave a mean median of 598.3 km/s and 90 per cent
// coverage 5/40 (measured); with the weights 557.5 km/s and 35/40.
func TestTailDrawsOf3DVelocities(t *testing.T) {
	if testing.Short() {
		t.Skip("40 fits of 200 stars x 64 draws")
	}
	const seeds, vTrue, sigma = 40, 550.0, 50.0
	opt := DefaultTailOptions()
	opt.KMin, opt.KMax = 3, 3
	sun := SunPositionKpc(frames.DefaultSun())
	m := defaultModel(t)
	var sumMed float64
	n90 := 0
	for seed := range uint64(seeds) {
		rng := rand.New(rand.NewPCG(seed, 0x3d))
		stars := make([]TailStar, 200)
		for i := range stars {
			v := drawLT(rng, vTrue, 3, opt.VMinKms)
			z, phi := 2*rng.Float64()-1, 2*math.Pi*rng.Float64()
			r := math.Sqrt(1 - z*z)
			obs := [3]float64{v*r*math.Cos(phi) + sigma*rng.NormFloat64(), v*r*math.Sin(phi) + sigma*rng.NormFloat64(), v*z + sigma*rng.NormFloat64()}
			pos, vel := make([][3]float64, 64), make([][3]float64, 64)
			for j := range vel {
				pos[j] = sun
				for c := range 3 {
					vel[j][c] = obs[c] + sigma*rng.NormFloat64()
				}
			}
			st, err := NewTailStar("s", pos, vel, m, sun, 0)
			if err != nil {
				t.Fatal(err)
			}
			stars[i] = st
		}
		res, err := FitTail(stars, opt)
		if err != nil {
			t.Fatal(err)
		}
		sumMed += res.VEscKms.Median
		if _, in := covers(res.VEscKms, vTrue); in {
			n90++
		}
	}
	mean := sumMed / seeds
	t.Logf("3D draws, %v km/s errors: mean median %.1f km/s, 90%% interval covers %d/%d", sigma, mean, n90, seeds)
	if math.Abs(mean-vTrue) > 10 {
		t.Errorf("mean median %.1f km/s, truth %v", mean, vTrue)
	}
	if float64(n90) < 0.8*seeds {
		t.Errorf("90%% coverage %d/%d, want >= 80%%", n90, seeds)
	}
}

// TestTailErrors: bad input is refused with ErrTail; stars with no draw
// above v_min are skipped and named.
func TestTailErrors(t *testing.T) {
	opt := DefaultTailOptions()
	if _, err := FitTail([]TailStar{{SpeedKms: []float64{400}, Scale: []float64{1, 1}}}, opt); !errors.Is(err, ErrTail) {
		t.Errorf("scale length mismatch: %v", err)
	}
	if _, err := FitTail([]TailStar{{SpeedKms: []float64{400}, Weight: []float64{1, 1}}}, opt); !errors.Is(err, ErrTail) {
		t.Errorf("weight length mismatch: %v", err)
	}
	if _, err := FitTail([]TailStar{{SpeedKms: []float64{400}, Weight: []float64{-1}}}, opt); !errors.Is(err, ErrTail) {
		t.Errorf("negative weight: %v", err)
	}
	if _, err := FitTail([]TailStar{{SpeedKms: []float64{math.NaN()}}}, opt); !errors.Is(err, ErrTail) {
		t.Errorf("NaN speed: %v", err)
	}
	if _, err := FitTail([]TailStar{{SpeedKms: []float64{100}}}, opt); !errors.Is(err, ErrTail) {
		t.Errorf("no draw above v_min: %v", err)
	}
	off := opt
	off.OutlierMax = 0
	if _, err := FitTail([]TailStar{{SpeedKms: []float64{1500}}}, off); !errors.Is(err, ErrTail) {
		t.Errorf("star above the grid without outliers: %v", err)
	}
	bad := opt
	bad.KMax = 1
	if _, err := FitTail([]TailStar{{SpeedKms: []float64{400}}}, bad); !errors.Is(err, ErrTail) {
		t.Errorf("k max below k min: %v", err)
	}
	r, err := FitTail([]TailStar{{ID: "slow", SpeedKms: []float64{100}}, {ID: "fast", SpeedKms: []float64{420}}}, opt)
	if err != nil {
		t.Fatal(err)
	}
	if r.Stars != 1 || len(r.Skipped) != 1 || r.Skipped[0] != "slow" {
		t.Errorf("stars %d, skipped %v", r.Stars, r.Skipped)
	}
}

// tailBenchStars: 2000 stars x 64 draws with 20 km/s errors and scales
// near 1, the size the brief sets for "a few seconds".
func tailBenchStars(rng *rand.Rand) []TailStar {
	stars := make([]TailStar, 2000)
	for i := range stars {
		s0 := 0.85 + 0.3*rng.Float64()
		v := drawLT(rng, 540*s0, 3, 300)
		st := TailStar{SpeedKms: make([]float64, 64), Scale: make([]float64, 64)}
		for j := range st.SpeedKms {
			st.SpeedKms[j] = v + 20*rng.NormFloat64()
			st.Scale[j] = s0 * (1 + 0.01*rng.NormFloat64())
		}
		stars[i] = st
	}
	return stars
}

func BenchmarkFitTail2000x64(b *testing.B) {
	stars := tailBenchStars(rand.New(rand.NewPCG(3, 4)))
	opt := DefaultTailOptions()
	b.ResetTimer()
	for b.Loop() {
		if _, err := FitTail(stars, opt); err != nil {
			b.Fatal(err)
		}
	}
}
