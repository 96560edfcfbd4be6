package kinematics

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"starvet/galaxy/frames"
	"starvet/internal/vec"
)

// binomialCDF is P(X <= k) for X ~ Binomial(n, p), summed term by term in
// logs (the definition; independent of the beta functions).
func binomialCDF(k, n int, p float64) float64 {
	lgN, _ := math.Lgamma(float64(n + 1))
	sum := 0.0
	for j := 0; j <= k; j++ {
		a, _ := math.Lgamma(float64(j + 1))
		b, _ := math.Lgamma(float64(n - j + 1))
		sum += math.Exp(lgN - a - b + float64(j)*math.Log(p) + float64(n-j)*math.Log1p(-p))
	}
	return sum
}

func TestBinomialUpper(t *testing.T) {
	// The Clopper & Pearson 1934 (Biometrika 26, 404) limit u solves
	// P(X <= k | n, u) = alpha: checked against the binomial sum itself.
	for _, c := range []struct {
		k, n  int
		alpha float64
	}{
		{0, 1, 0.05}, {0, 50, 2.87e-7}, {0, 64, 7.2e-8}, {1, 64, 7.2e-8}, {3, 64, 2.87e-7}, {5, 20, 0.025},
		{10, 100, 0.05}, {40, 128, 1e-6}, {99, 100, 0.01}, {250, 1000, 2.87e-7}, {990, 1000, 2.87e-7},
	} {
		u := binomialUpper(float64(c.k), float64(c.n), c.alpha)
		if got := binomialCDF(c.k, c.n, u); math.Abs(got-c.alpha) > 1e-6*c.alpha {
			t.Errorf("k=%d n=%d alpha=%g: u=%v gives P(X<=k)=%v", c.k, c.n, c.alpha, u, got)
		}
	}
	// Closed forms: k = 0 gives 1 - alpha^(1/n) (from (1-u)^n = alpha), and
	// k = n leaves nothing to exclude (Clopper & Pearson 1934).
	if got, want := binomialUpper(0, 50, 2.87e-7), 1-math.Pow(2.87e-7, 1.0/50); math.Abs(got-want) > 1e-12 || math.Abs(want-0.26) > 0.005 {
		t.Errorf("k=0 n=50: %v, want %v (about 0.26)", got, want)
	}
	if got := binomialUpper(64, 64, 1e-3); got != 1 {
		t.Errorf("k=n: %v, want 1", got)
	}
	// The "rule of three": for k = 0 the 95% upper limit is about 3/n
	// (Hanley & Lippman-Hand 1983, JAMA 249, 1743).
	if got := binomialUpper(0, 1000, 0.05); math.Abs(got-3.0/1000) > 0.02*3.0/1000 {
		t.Errorf("rule of three: %v, want about 0.003", got)
	}
	// Effective (non-integer) counts: the 1 - alpha point of
	// Beta(k+1, n-k), checked through gonum's forward beta CDF, and
	// between its integer neighbours.
	for _, c := range [][3]float64{{0.7, 37.3, 1e-6}, {3.2, 80.5, 7.2e-8}, {12.5, 20.25, 0.01}} {
		k, n, alpha := c[0], c[1], c[2]
		u := binomialUpper(k, n, alpha)
		if cdf := (distuv.Beta{Alpha: k + 1, Beta: n - k}).CDF(u); math.Abs(cdf-(1-alpha)) > 1e-9 {
			t.Errorf("k=%g n=%g: Beta CDF at %v is %v, want %v", k, n, u, cdf, 1-alpha)
		}
		if lo, hi := binomialUpper(math.Floor(k), n, alpha), binomialUpper(math.Ceil(k), n, alpha); !(lo <= u && u <= hi) {
			t.Errorf("k=%g n=%g: %v not between %v and %v", k, n, u, lo, hi)
		}
	}
	// 5 sigma one-sided is a tail of 2.87e-7 (normal table, from memory).
	if a := stopAlpha(5, 64); math.Abs(a-2.8665e-7) > 1e-10 {
		t.Errorf("5 sigma tail %v", a)
	}
}

// The block schedule: 64, then doubling, capped at Samples.
func TestBlockSchedule(t *testing.T) {
	for _, c := range []struct {
		samples int
		ends    []int
	}{{1000, []int{64, 128, 256, 512, 1000}}, {100, []int{64, 100}}, {64, []int{64}}, {10, []int{10}}, {129, []int{64, 128, 129}}} {
		var ends []int
		for done := 0; done < c.samples; {
			done = nextBlockEnd(done, c.samples)
			ends = append(ends, done)
		}
		if !slices.Equal(ends, c.ends) || stopLooks(c.samples) != len(c.ends)-1 {
			t.Errorf("samples %d: ends %v looks %d, want %v", c.samples, ends, stopLooks(c.samples), c.ends)
		}
	}
}

// stopSettings is early stopping as the pipeline will call it:
// min(marginal_p, trace_min_p) = 0.5, 5 sigma, tail at half of v_esc.
func stopSettings(priorKms float64) Settings {
	set := testSettings()
	set.Samples, set.KeepSamples, set.VelocityPriorKms = 1000, 1000, priorKms
	set.StopBelowP, set.StopSigma, set.TailEscFraction = 0.5, 5, 0.5
	return set
}

// stopStars: the invented bench population (0.3-30 kpc, halo-like
// velocities, every distance method, 30% without rv), plus stars without
// a parallax (catalog distance alone) and the mixed test stars.
func stopStars() []Star {
	stars := benchStars(300)
	for i := range stars {
		if i%10 == 3 {
			s := &stars[i]
			d := 1 + float64(i%7)
			s.ParallaxMas, s.ParallaxErrMas, s.DistKpc, s.DistErrKpc, s.DistMod, s.DistModErr = nan, nan, d, 0.15*d, nan, nan
		}
	}
	return append(stars, mixedStars(100)...)
}

// status is the verdict the pipeline gives with unbound_p 0.8 and
// marginal_p 0.5 (the campaign defaults) to the share that applies.
func status(r *Result) string {
	p := r.PUnboundLower
	if r.HasRV {
		p = r.PUnbound
	}
	switch {
	case p >= 0.8:
		return "unbound"
	case p >= 0.5:
		return "marginal"
	}
	return "bound"
}

// Stopped stars against the same stars with every draw: their p_unbound and
// speed percentiles must agree within Monte Carlo error, and their status
// must be the same.
func TestEarlyStoppingAgrees(t *testing.T) {
	const z = 4 // standard errors allowed (common practice for a pass/fail band)
	stars := stopStars()
	p := milkyWayTest()
	for _, prior := range []float64{0, 150} {
		t.Run(fmt.Sprint("prior-", prior), func(t *testing.T) {
			on := stopSettings(prior)
			off := on
			off.StopBelowP = 0
			got, err := EvaluateAll(context.Background(), stars, &on, p, 0, nil)
			if err != nil {
				t.Fatal(err)
			}
			full, err := EvaluateAll(context.Background(), stars, &off, p, 0, nil)
			if err != nil {
				t.Fatal(err)
			}
			counts := map[string]int{}
			for i := range got {
				g, f := &got[i], &full[i]
				if g.OK != f.OK {
					t.Fatalf("%s: ok %v with stopping, %v without", g.ID, g.OK, f.OK)
				}
				if !g.OK {
					continue
				}
				if !g.Stopped {
					counts["full"]++
					if g.Samples != f.Samples {
						t.Errorf("%s: not stopped but %d draws of %d", g.ID, g.Samples, f.Samples)
					}
					continue
				}
				counts[fmt.Sprint(g.Method, "-rv-", g.HasRV)]++
				counts["stopped"]++
				if !(g.Samples < on.Samples && g.PUnboundUpper < on.StopBelowP) {
					t.Errorf("%s: stopped with %d draws and bound %v", g.ID, g.Samples, g.PUnboundUpper)
				}
				// The tail rule on what the stopped star reports (the
				// brief's TailEscFraction, SpeedKms[2] or SpeedLowerKms[2]).
				if v84 := map[bool]float64{true: g.SpeedKms[2], false: g.SpeedLowerKms[2]}[g.HasRV]; !(v84 <= on.TailEscFraction*g.VEscKms[1]) {
					t.Errorf("%s: stopped with v84 %v above %g of v_esc %v", g.ID, v84, on.TailEscFraction, g.VEscKms[1])
				}
				if status(g) != status(f) {
					t.Errorf("%s: status %s stopped, %s with every draw (p %v / %v)", g.ID, status(g), status(f), g.PUnbound, f.PUnbound)
				}
				checkStoppedShare(t, g, f, z)
				checkStoppedPercentiles(t, &stars[i], on, g, f, z)
			}
			t.Logf("%v", counts)
			// The test must see stopped stars of each kind, and stars that
			// went on to every draw.
			for _, k := range []string{"full", "inverse-rv-true", "inverse-rv-false", "edsd-rv-true", "edsd-rv-false", "catalog-rv-true", "catalog-rv-false"} {
				if counts[k] == 0 {
					t.Errorf("no %s star among %v", k, counts)
				}
			}
		})
	}
}

// checkStoppedShare: the stopped share against the full one within z
// binomial standard errors of the stopped sample (its effective size),
// with the Laplace estimate (k+1)/(n+2) of the full sample in the error
// so that a share of 0 still has one (common practice); and the full share
// must lie below the stopped star's upper bound (Clopper & Pearson 1934).
func checkStoppedShare(t *testing.T, g, f *Result, z float64) {
	t.Helper()
	pg, pf := g.PUnboundLower, f.PUnboundLower
	if g.HasRV {
		pg, pf = g.PUnbound, f.PUnbound
	}
	pl := (pf*f.EffectiveSamples + 1) / (f.EffectiveSamples + 2)
	if se := math.Sqrt(pl * (1 - pl) / g.EffectiveSamples); math.Abs(pg-pf) > z*se {
		t.Errorf("%s: p %v from %d draws (n_eff %.0f), %v from all (se %.3g)", g.ID, pg, g.Samples, g.EffectiveSamples, pf, se)
	}
	if pf >= g.PUnboundUpper {
		t.Errorf("%s: full p %v above the stopped bound %v", g.ID, pf, g.PUnboundUpper)
	}
}

// checkStoppedPercentiles: at each full-sample speed percentile x (level
// q) the stopped draws' CDF, F = sum w_i 1{v_i <= x} / sum w_i, lies within
// z standard errors sqrt(q (1-q) / n_eff) of q, n_eff = (sum w)^2 / sum w^2
// (Kish 1965, Survey Sampling, as the stopping bound uses it; w_i the
// velocity prior's weights, 1 without it). With equal weights this is the
// distribution-free interval of a quantile between the order statistics of
// ranks n q -+ z sqrt(n q (1-q)) (the binomial count of draws below it,
// e.g. David & Nagaraja 2003, Order Statistics, 3rd ed., sec. 7.1, from
// memory). The stopped star's draws are those of the same star with the
// flat prior and Samples set to its last block end (blocks continue the
// same streams).
func checkStoppedPercentiles(t *testing.T, s *Star, set Settings, g, f *Result, z float64) {
	t.Helper()
	raw := set
	raw.StopBelowP, raw.VelocityPriorKms = 0, 0
	var r Result
	for m := stopFirstBlock; r.Samples != g.Samples; m *= 2 {
		if m > set.Samples {
			t.Fatalf("%s: no block end gives its %d draws", g.ID, g.Samples)
		}
		raw.Samples, raw.KeepSamples = m, m
		r = eval(*s, raw)
	}
	v, w := make([]float64, len(r.SampleVel)), make([]float64, len(r.SampleVel))
	for i, x := range r.SampleVel {
		v[i] = vec.Norm(x)
		w[i] = 1
		if g.HasRV && set.VelocityPriorKms > 0 {
			w[i] = math.Exp(-v[i] * v[i] / (2 * set.VelocityPriorKms * set.VelocityPriorKms))
		}
	}
	want := f.SpeedLowerKms
	if g.HasRV {
		want = f.SpeedKms
	}
	for k, q := range percentileLevels {
		var sw, sw2, below float64
		for i := range v {
			sw += w[i]
			sw2 += w[i] * w[i]
			if v[i] <= want[k] {
				below += w[i]
			}
		}
		if cdf, se := below/sw, math.Sqrt(q*(1-q)*sw2)/sw; math.Abs(cdf-q) > z*se {
			t.Errorf("%s: full p%.0f %v sits at %.3f of the %d stopped draws (se %.3f)", g.ID, 100*q, want[k], cdf, len(v), se)
		}
	}
}

// A star that goes on to every draw gets the result it gets without early
// stopping, field for field; a stopped star (with no dropped draws) the
// result it gets with Samples set to its draw count: the blocks continue
// the same streams.
func TestEarlyStoppingSameDraws(t *testing.T) {
	stars := stopStars()
	p := milkyWayTest()
	for _, prior := range []float64{0, 150} {
		on := stopSettings(prior)
		on.KeepSamples = 20
		off := on
		off.StopBelowP = 0
		got, _ := EvaluateAll(context.Background(), stars, &on, p, 0, nil)
		full, _ := EvaluateAll(context.Background(), stars, &off, p, 0, nil)
		short := map[int][]Result{}
		checked := map[bool]int{}
		for i := range got {
			g := &got[i]
			if !g.Stopped {
				if resultKeyV1(g) != resultKeyV1(&full[i]) {
					t.Errorf("prior %g, %s: not stopped, but differs from the run without stopping", prior, g.ID)
				}
				checked[false]++
				continue
			}
			if hasReason(*g, ReasonPlxDrawsDropped) {
				continue
			}
			if short[g.Samples] == nil {
				s := off
				s.Samples = g.Samples
				short[g.Samples], _ = EvaluateAll(context.Background(), stars, &s, p, 0, nil)
			}
			if resultKeyV1(g) != resultKeyV1(&short[g.Samples][i]) {
				t.Errorf("prior %g, %s: stopped at %d draws, differs from a run of %d draws", prior, g.ID, g.Samples, g.Samples)
			}
			checked[true]++
		}
		if checked[false] == 0 || checked[true] == 0 {
			t.Errorf("prior %g: checked %v", prior, checked)
		}
	}
}

// A star whose speed reaches past half its escape speed at the 84th
// percentile never stops; a clearly bound star stops after the first block.
func TestEarlyStoppingTailAndBound(t *testing.T) {
	sun := frames.DefaultSun()
	mk := func(id string, dKpc float64, target [3]float64) Star {
		s := baseStar(id)
		s.ParallaxMas, s.ParallaxErrMas = 1/dKpc, 0.02/dKpc
		s.PMRAMasYr, s.PMDecMasYr, s.RVKms = velocityInputs(sun, s.RADeg, s.DecDeg, dKpc, target)
		return s
	}
	// About 360 km/s near the Sun, where v_esc is about 530 km/s (Piffl
	// et al. 2014, A&A 562, A91): bound (p = 0), yet past half of v_esc.
	fast := mk("tail", 1, [3]float64{0, 360, 0})
	// Rotating with the disc at 1 kpc: bound by far.
	slow := mk("slow", 1, [3]float64{0, 230, 0})
	for _, samples := range []int{1000, 100} {
		set := stopSettings(0)
		set.Samples = samples
		r := eval(fast, set)
		if !r.OK || r.Stopped || r.Samples != samples || r.PUnbound != 0 || !(r.SpeedKms[2] > 0.5*r.VEscKms[1]) {
			t.Errorf("samples %d, fast tail: stopped %v with %d draws, p %v, v84 %v, v_esc %v", samples, r.Stopped, r.Samples, r.PUnbound, r.SpeedKms[2], r.VEscKms[1])
		}
		// Only the tail rule keeps it going: with the tail at 0.9 v_esc it stops.
		set.TailEscFraction = 0.9
		if r := eval(fast, set); !r.Stopped || r.Samples != stopFirstBlock {
			t.Errorf("samples %d, fast star with the tail at 0.9 v_esc: stopped %v with %d draws", samples, r.Stopped, r.Samples)
		}
		set.TailEscFraction = 0.5
		r = eval(slow, set)
		if !r.OK || !r.Stopped || r.Samples != stopFirstBlock || r.PUnbound != 0 || !(r.PUnboundUpper < 0.25) {
			t.Errorf("samples %d, bound star: stopped %v with %d draws, p %v, bound %v", samples, r.Stopped, r.Samples, r.PUnbound, r.PUnboundUpper)
		}
	}
	// Fewer draws than the first block: nothing to stop.
	set := stopSettings(0)
	set.Samples = stopFirstBlock
	if r := eval(slow, set); r.Stopped || r.Samples != stopFirstBlock {
		t.Errorf("samples %d: stopped %v with %d draws", set.Samples, r.Stopped, r.Samples)
	}
}

// With early stopping a star's result still depends on nothing but itself:
// not the worker count, the order of the stars or which others are in the
// batch (an incremental run equals a full one).
func TestEarlyStoppingDeterministic(t *testing.T) {
	stars := stopStars()
	p := milkyWayTest()
	for _, prior := range []float64{0, 150} {
		set := stopSettings(prior)
		set.KeepSamples = 20
		ref, err := EvaluateAll(context.Background(), stars, &set, p, 1, nil)
		if err != nil {
			t.Fatal(err)
		}
		byID := map[string]string{}
		stopped := 0
		for i := range ref {
			byID[ref[i].ID] = resultKey(&ref[i])
			if ref[i].Stopped {
				stopped++
			}
		}
		if stopped == 0 {
			t.Fatal("no star stopped")
		}
		rnd := rand.New(rand.NewPCG(5, 6))
		for _, workers := range []int{2, 3} {
			perm := rnd.Perm(len(stars))
			sub := make([]Star, 0, len(stars))
			for _, j := range perm[:len(perm)*2/3] {
				sub = append(sub, stars[j])
			}
			got, err := EvaluateAll(context.Background(), sub, &set, p, workers, nil)
			if err != nil {
				t.Fatal(err)
			}
			for i := range got {
				if resultKey(&got[i]) != byID[got[i].ID] {
					t.Fatalf("prior %g, workers %d: %s differs in a shuffled subset", prior, workers, got[i].ID)
				}
			}
		}
	}
}
