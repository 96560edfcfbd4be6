package weigh

import (
	"context"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
	"time"

	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
	"starvet/internal/vec"
)

// idealEjectee flies a star as the invented scenarios do (scenario's
// gcEjectee): launched 0.01-0.05 kpc from the centre in an isotropic
// direction with a speed from DefaultEjection referred to
// EjectionDepthKpc, isotropic velocity, flown in p for a time from the
// model's window. ok is false when its present speed is below vSelKms.
func idealEjectee(rng *rand.Rand, p *potential.Model, vSelKms float64) (x, v [3]float64, ok bool) {
	ej := DefaultEjection
	r0 := 0.01 + 0.04*rng.Float64()
	d := randomDirection(rng)
	x0 := [3]float64{r0 * d[0], r0 * d[1], r0 * d[2]}
	s := LaunchSpeedKms(p, x0, ej.SampleSpeed(rng))
	e := randomDirection(rng)
	v0 := [3]float64{s * e[0], s * e[1], s * e[2]}
	x, v = orbit.Advance(p, x0, v0, ej.SampleFlightMyr(rng), orbit.Options{})
	return x, v, math.Sqrt(v[0]*v[0]+v[1]*v[1]+v[2]*v[2]) >= vSelKms
}

// calibrationPool fits a pool of n ideal ejectees at the true scale (each
// with nDraws draws and fractional errors frac on position and velocity,
// present speed >= vSel, within DefaultOrbitMaxRadiusKpc of the centre,
// where FitOrbits takes stars) under DefaultEjection and returns the
// per-star ln L rows of the selected ones.
func calibrationPool(t *testing.T, truth float64, n, nDraws int, frac, vSel float64, seed uint64) (scales []float64, rows [][]float64) {
	t.Helper()
	base := defaultModel(t)
	m, err := ScaleHalo(base, truth)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, uint64(truth*1000)))
	stars := make([]OrbitStar, 0, n)
	for len(stars) < n {
		x, v, ok := idealEjectee(rng, m, vSel)
		if ok && vec.Norm(x) <= DefaultOrbitMaxRadiusKpc {
			stars = append(stars, draws(rng, "ej", x, v, nDraws, frac, frac))
		}
	}
	ej := DefaultEjection
	res, err := FitOrbits(context.Background(), base, stars, OrbitOptions{Score: ScoreEjection, Ejection: &ej, SelectMinSpeedKms: vSel, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	for i, row := range res.PerStar {
		if res.Selected[i] {
			rows = append(rows, row)
		}
	}
	return res.Scales, rows
}

// posteriorQuantiles is the quantile function of the scale's posterior
// under a prior uniform in ln scale over the grid (uniform in ln M_s), the
// alternative to Wilks intervals TestOrbitIntervalCalibration measures:
// ln L interpolated linearly in ln scale between grid points, so the
// density is exponential on each step and its integral and quantiles
// there are exact (the limit of a fine interpolation of the grid in ln L);
// a step with a -Inf end holds no mass.
func posteriorQuantiles(scales, logLike []float64) func(p float64) float64 {
	n := len(scales)
	top := math.Inf(-1)
	for _, v := range logLike {
		top = math.Max(top, v)
	}
	x := make([]float64, n)
	l := make([]float64, n)
	for k := range n {
		x[k], l[k] = math.Log(scales[k]), logLike[k]-top
	}
	// The mass of step k (x[k] to x[k+1]).
	step := func(k int) float64 {
		a, b := l[k], l[k+1]
		if math.IsInf(a, -1) || math.IsInf(b, -1) {
			return 0
		}
		h, d := x[k+1]-x[k], b-a
		if math.Abs(d) < 1e-9 {
			return h * math.Exp(a)
		}
		return h * math.Exp(a) * math.Expm1(d) / d
	}
	cum := make([]float64, n)
	for k := range n - 1 {
		cum[k+1] = cum[k] + step(k)
	}
	total := cum[n-1]
	return func(p float64) float64 {
		if n == 1 || !(total > 0) {
			return scales[0]
		}
		t := p * total
		k := 0
		for k < n-2 && cum[k+1] < t {
			k++
		}
		m := t - cum[k]
		a, b := l[k], l[k+1]
		h, d := x[k+1]-x[k], b-a
		var f float64
		switch {
		case math.IsInf(a, -1) || math.IsInf(b, -1):
		case math.Abs(d) < 1e-9:
			f = m / (h * math.Exp(a))
		default: // h e^a (e^(f d) - 1)/d = m
			f = math.Log1p(m*d/(h*math.Exp(a))) / d
		}
		f = math.Min(math.Max(f, 0), 1)
		return math.Exp(x[k] + f*h)
	}
}

// The compared posterior's quantiles (posteriorQuantiles) against densities worked by hand (ours): a
// flat ln L makes it uniform in ln s; a -Inf end empties its step; ln L
// rising linearly by d over one step gives the density e^(d x) on [0, 1]
// in x = ln s, whose median is ln((1 + e^d)/2)/d.
func TestPosteriorQuantiles(t *testing.T) {
	q := posteriorQuantiles([]float64{1, math.E, math.E * math.E}, []float64{-3, -3, -3})
	for _, p := range []float64{0.05, 0.5, 0.9} {
		if got, want := q(p), math.Exp(2*p); math.Abs(got/want-1) > 1e-9 {
			t.Errorf("flat: q(%v) = %v, want %v", p, got, want)
		}
	}
	q = posteriorQuantiles([]float64{1, math.E, math.E * math.E}, []float64{math.Inf(-1), 0, 0})
	if got, want := q(0.5), math.Exp(1.5); math.Abs(got/want-1) > 1e-9 {
		t.Errorf("-Inf step: median %v, want %v", got, want)
	}
	d := 2.0
	if got, want := posteriorQuantiles([]float64{1, math.E}, []float64{0, d})(0.5), math.Exp(math.Log((1+math.Exp(d))/2)/d); math.Abs(got/want-1) > 1e-9 {
		t.Errorf("exponential step: median %v, want %v", got, want)
	}
}

// The coverage of the orbit method's intervals on ideal ejectees flown
// and scored under the same ejection model (DefaultEjection): the Wilks
// profile-likelihood intervals about the grid maximum (Wilks 1938, Ann.
// Math. Stat. 9, 60), which FitOrbits reports, against the equal-tailed
// intervals of the posterior uniform in ln scale (posteriorQuantiles;
// 15.87/84.13 and 5/95 per cent points, common practice), both from the
// same ln L on the refined grid. Each true scale's pool of ejectees (0.5
// per cent errors, 16 draws, present speed >= 450 km/s, within
// DefaultOrbitMaxRadiusKpc) is split into disjoint sets of 50, 100 and 200
// stars. A heavy measurement, run on demand: STARVET_ORBIT_CALIBRATION=1
// (pool size STARVET_ORBIT_CALIBRATION_POOL, default 4000 per true scale;
// about 3-4 minutes on 2 cores). It asserts, at the bound, that
// the Wilks 90 per cent interval holds the truth in >= 80 per cent of the
// sets of each size and scale, and that pooled over the sets its 68 and 90
// per cent intervals cover within 10 points of their levels.
//
// Measured 2026-12-04, the ejection score from each draw's velocity law
// and DefaultEjection's smooth speed law (pool 4000): Wilks 68% 289/411
// sets (70.3%), 90% 381/411 (92.7%); at truths 1 and 2 alone 191/274
// (69.7%) and 249/274 (90.9%); every cell >= 84% at 90%. The pool was
// 2000 until then; with 2000 the cell of 200 stars at truth 1 held 7 of 9
// sets (pooled 68.6% and 91.7%): 9 or 10 sets give a binomial spread of
// about 10 points at 90 per cent, the bound's whole margin, hence the
// larger pool. Measured 2026-12-03 with the box law and each draw's full
// speed (pool 2000): Wilks 68% 155/207 sets (74.9%), 90% 192/207 (92.8%);
// at truths 1 and 2 alone 96/140 (68.6%) and 127/140 (90.7%). The
// posterior then: 68% 157/207 (75.8%) but at truth 1 only 39/70 (56%),
// 90% 203/207 (98.1%): its equal-tailed intervals over-covered at 90% and
// under-covered at 68% where the likelihood ended at a cliff (a speed-law
// or flight-time edge) near the truth, so Wilks intervals stay.
// On the unrefined 21-point grid (Refine 1) the 68% intervals of 200 stars
// covered 4 of 10 sets at truths 1 and 2 (Wilks) and the widths fell to
// about one grid step: hence DefaultRefine.
func TestOrbitIntervalCalibration(t *testing.T) {
	if os.Getenv("STARVET_ORBIT_CALIBRATION") != "1" {
		t.Skip("set STARVET_ORBIT_CALIBRATION=1: fits thousands of simulated ejectees")
	}
	pool := 4000
	if s := os.Getenv("STARVET_ORBIT_CALIBRATION_POOL"); s != "" {
		var err error
		if pool, err = strconv.Atoi(s); err != nil {
			t.Fatal(err)
		}
	}
	const nDraws, frac, vSel = 16, 0.005, 450.0
	start := time.Now()
	var all, all68, all90 int
	for _, truth := range []float64{0.5, 1, 2} {
		scales, rows := calibrationPool(t, truth, pool, nDraws, frac, vSel, 77)
		t.Logf("truth %.1f: %d of %d selected, %v", truth, len(rows), pool, time.Since(start).Round(time.Second))
		for _, size := range []int{50, 100, 200} {
			var sets, w68, w90, p68, p90 int
			var wWidth, pWidth float64
			for lo := 0; lo+size <= len(rows); lo += size {
				r := &OrbitResult{Scales: scales, LogLike: make([]float64, len(scales))}
				for _, row := range rows[lo : lo+size] {
					for k, v := range row {
						r.LogLike[k] += v
					}
				}
				r.profile()
				q := posteriorQuantiles(r.Scales, r.LogLike)
				a68, b68, a90, b90 := q(0.158655), q(0.841345), q(0.05), q(0.95)
				sets++
				in := func(a, b float64) int {
					if a <= truth && truth <= b {
						return 1
					}
					return 0
				}
				w68 += in(r.Lo68, r.Hi68)
				w90 += in(r.Lo90, r.Hi90)
				p68 += in(a68, b68)
				p90 += in(a90, b90)
				wWidth += math.Log(r.Hi90 / r.Lo90)
				pWidth += math.Log(b90 / a90)
			}
			if sets == 0 {
				continue
			}
			all, all68, all90 = all+sets, all68+w68, all90+w90
			t.Logf("truth %.1f, %d stars, %d sets: Wilks 68%% %d, 90%% %d; posterior 68%% %d, 90%% %d (mean 90%% width in ln scale: Wilks %.2f, posterior %.2f)",
				truth, size, sets, w68, w90, p68, p90, wWidth/float64(sets), pWidth/float64(sets))
			if float64(w90) < 0.8*float64(sets) {
				t.Errorf("truth %.1f, %d stars: the Wilks 90%% interval holds the truth in %d of %d sets, want >= 80%%", truth, size, w90, sets)
			}
		}
	}
	c68, c90 := float64(all68)/float64(all), float64(all90)/float64(all)
	t.Logf("pooled over %d sets: Wilks 68%% covers %.1f%%, 90%% %.1f%%", all, 100*c68, 100*c90)
	if math.Abs(c68-0.6827) > 0.1 || math.Abs(c90-0.9) > 0.1 {
		t.Errorf("pooled Wilks coverage %.1f%% (68%%) and %.1f%% (90%%), want within 10 points of 68.3%% and 90%%", 100*c68, 100*c90)
	}
}
