package kinematics

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"syscall"
	"testing"
	"time"

	"starvet/galaxy/frames"
	"starvet/galaxy/potential"
	"starvet/internal/units"
	"starvet/internal/vec"
)

// benchStars makes n invented stars: distances 0.3-30 kpc, halo-like
// velocities (150 km/s per component around the Solar motion), parallax
// errors 0.02-0.3 mas (so all three distance methods occur), rv for 70%,
// a distance modulus for 20%.
func benchStars(n int) []Star {
	rnd := rand.New(rand.NewPCG(2026, 12))
	stars := make([]Star, n)
	sun := frames.DefaultSun()
	for i := range stars {
		ra, dec := 360*rnd.Float64(), math.Asin(2*rnd.Float64()-1)/units.RadPerDeg
		d := 0.3 * math.Pow(100, rnd.Float64())
		target := [3]float64{150 * rnd.NormFloat64(), 150 * rnd.NormFloat64(), 150 * rnd.NormFloat64()}
		pa, pd, rv := velocityInputs(sun, ra, dec, d, target)
		plxErr := 0.02 + 0.28*rnd.Float64()
		s := Star{
			ID: fmt.Sprintf("bench-%06d", i), RADeg: ra, DecDeg: dec,
			ParallaxMas: 1/d + plxErr*rnd.NormFloat64(), ParallaxErrMas: plxErr,
			PMRAMasYr: pa, PMRAErrMasYr: 0.03, PMDecMasYr: pd, PMDecErrMasYr: 0.03,
			CorrParallaxPMRA: 0.2, CorrParallaxPMDec: -0.1, CorrPMRAPMDec: 0.05,
			RVKms: rv, RVErrKms: 5, DistKpc: nan, DistErrKpc: nan, DistMod: nan, DistModErr: nan,
		}
		if rnd.Float64() < 0.3 {
			s.RVKms, s.RVErrKms = nan, nan
		}
		if rnd.Float64() < 0.2 {
			s.DistMod, s.DistModErr = 5*math.Log10(d*1000/10), 0.2
		}
		stars[i] = s
	}
	return stars
}

// benchGalaxy is milkyWayBench as one concrete type, so the benchmark
// measures the kinematics rather than three interface calls per Phi. Same
// formulas and parameters (TestBenchGalaxyMatches).
type benchGalaxy struct {
	bulge hernquist
	disk  miyamotoNagai
	halo  nfw
}

func newBenchGalaxy() *benchGalaxy {
	c := milkyWayBench()
	return &benchGalaxy{c[0].(hernquist), c[1].(miyamotoNagai), c[2].(nfw)}
}

// Phi is the sum of the three component potentials with r computed once.
func (g *benchGalaxy) Phi(x [3]float64) float64 {
	r := vec.Norm(x)
	bulge := -gravConst * g.bulge.massMsun / (r + g.bulge.aKpc)
	halo := -gravConst * g.halo.scaleMassMsun * math.Log1p(r/g.halo.rsKpc) / r
	return bulge + g.disk.Phi(x) + halo
}

func (g *benchGalaxy) Accel(x [3]float64) [3]float64 {
	a, b, c := g.bulge.Accel(x), g.disk.Accel(x), g.halo.Accel(x)
	return [3]float64{a[0] + b[0] + c[0], a[1] + b[1] + c[1], a[2] + b[2] + c[2]}
}

func TestBenchGalaxyMatches(t *testing.T) {
	g, s := newBenchGalaxy(), milkyWayBench()
	for _, x := range [][3]float64{{-8.1, 0, 0.02}, {1, 2, 3}, {40, -30, 20}} {
		if a, b := g.Phi(x), s.Phi(x); math.Abs(a-b) > 1e-9*math.Abs(b) {
			t.Errorf("Phi(%v) = %v, want %v", x, a, b)
		}
	}
}

// cpuTime is the process's user+system CPU time: on the shared machine it is
// a steadier figure than wall time.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkKinematics100k: 100,000 stars x 1,000 draws on every core, in
// the default potential (potential.DefaultModel), with the campaign's
// default velocity prior (150 km/s, vetting/campaign) and with the flat
// prior: fixed draws (no early stopping), so that they measure the cost of
// a draw. adaptive/...: the same with early stopping as the pipeline calls
// it (below 0.5 at 5 sigma, tail at half of v_esc); "draws/star" is the
// mean number of draws used.
func BenchmarkKinematics100k(b *testing.B) {
	stars := benchStars(100000)
	for _, c := range []struct {
		name     string
		priorKms float64
		stop     bool
	}{{"prior=150", 150, false}, {"flat", 0, false}, {"adaptive/prior=150", 150, true}, {"adaptive/flat", 0, true}} {
		b.Run(c.name, func(b *testing.B) {
			set := DefaultSettings(frames.DefaultSun())
			set.Seed, set.Samples, set.KeepSamples = 1, 1000, 0
			set.VelocityPriorKms = c.priorKms
			if c.stop {
				set.StopBelowP, set.StopSigma, set.TailEscFraction = 0.5, 5, 0.5
			}
			// The production default potential, as a run uses it.
			p, err := potential.Builtin(potential.DefaultModel)
			if err != nil {
				b.Fatal(err)
			}
			var res []Result
			cpu0 := cpuTime()
			for b.Loop() {
				var err error
				res, err = EvaluateAll(context.Background(), stars, &set, p, 0, nil)
				if err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric((cpuTime()-cpu0).Seconds()/float64(b.N), "cpu-s/op")
			counts := map[string]int{}
			draws, ok := 0, 0
			for i := range res {
				counts[res[i].Method]++
				if !res[i].OK {
					counts["failed"]++
					continue
				}
				ok++
				draws += res[i].Samples
				if res[i].Stopped {
					counts["stopped"]++
				}
			}
			b.ReportMetric(float64(counts[MethodInverse]), "inverse")
			b.ReportMetric(float64(counts[MethodEDSD]), "edsd")
			b.ReportMetric(float64(counts[MethodCatalog]), "catalog")
			b.ReportMetric(float64(counts["failed"]), "failed")
			if c.stop {
				b.ReportMetric(float64(draws)/float64(max(1, ok)), "draws/star")
				b.ReportMetric(float64(counts["stopped"]), "stopped")
			}
		})
	}
}

// BenchmarkStar is one star, one core, per method (for profiling).
func BenchmarkStar(b *testing.B) {
	set := DefaultSettings(frames.DefaultSun())
	set.Seed = 1
	p := newBenchGalaxy()
	for _, tc := range []struct {
		name     string
		method   string
		keep     int
		priorKms float64
	}{{"inverse", MethodInverse, 0, 0}, {"edsd", MethodEDSD, 0, 0}, {"catalog", MethodCatalog, 0, 0},
		{"inverse-keep200", MethodInverse, 200, 0}, {"inverse-prior", MethodInverse, 0, 150}, {"inverse-keep200-prior", MethodInverse, 200, 150}} {
		b.Run(tc.name, func(b *testing.B) {
			s := baseStar("bench")
			s.DistKpc, s.DistErrKpc = 2, 0.2
			set.Distance, set.KeepSamples, set.VelocityPriorKms = tc.method, tc.keep, tc.priorKms
			var w worker
			var r Result
			cpu0 := cpuTime()
			for b.Loop() {
				w.evaluate(&s, &set, p, &r)
			}
			b.ReportMetric(float64((cpuTime()-cpu0).Nanoseconds())/float64(b.N), "cpu-ns/op")
			if !r.OK {
				b.Fatal(r.Reasons)
			}
		})
	}
}

// BenchmarkPercentiles: the 16/50/84 selection on 1000 draws, with the
// scratch space reused as a worker does.
func BenchmarkPercentiles(b *testing.B) {
	rnd := rand.New(rand.NewPCG(1, 2))
	a := make([]float64, 1000)
	c := make([]float64, 1000)
	for i := range a {
		a[i] = rnd.NormFloat64()
	}
	var q quantiler
	cpu0 := cpuTime()
	for b.Loop() {
		copy(c, a)
		q.percentiles(c, nil)
	}
	b.ReportMetric(float64((cpuTime()-cpu0).Nanoseconds())/float64(b.N), "cpu-ns/op")
}
