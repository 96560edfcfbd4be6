package orbit

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"starvet/galaxy/potential"
	"starvet/internal/parallel"
)

// countingPotential counts force evaluations (single goroutine only).
type countingPotential struct {
	potential.Potential
	n int
}

func (c *countingPotential) Accel(x [3]float64) [3]float64 {
	c.n++
	return c.Potential.Accel(x)
}

// benchStars builds a mock sample of candidates: 70 per cent ejected from
// the centre at 500-1200 km/s in random directions 20-250 Myr ago, 30 per
// cent kicked out of the disk at 100-400 km/s 10-100 Myr ago. Each star gets
// nSamples Monte Carlo samples with 10 per cent heliocentric distance
// scatter and 10 km/s per velocity axis.
func benchStars(p potential.Potential, nStars, nSamples int, seed uint64) []TraceInput {
	rng := rand.New(rand.NewPCG(seed, 1))
	sun := [3]float64{-8.122, 0, 0.0208}
	iso := func() [3]float64 {
		z := 2*rng.Float64() - 1
		ph := 2 * math.Pi * rng.Float64()
		s := math.Sqrt(1 - z*z)
		return [3]float64{s * math.Cos(ph), s * math.Sin(ph), z}
	}
	stars := make([]TraceInput, nStars)
	for i := range stars {
		var x, v [3]float64
		if rng.Float64() < 0.7 {
			n := iso()
			speed := 500 + 700*rng.Float64()
			for k := range 3 {
				x[k], v[k] = 1e-3*n[k], speed*n[k]
			}
			x, v = Advance(p, x, v, 20+230*rng.Float64(), Options{})
		} else {
			R := 4 + 11*rng.Float64()
			ph := 2 * math.Pi * rng.Float64()
			kick, n := 100+300*rng.Float64(), iso()
			x = [3]float64{R * math.Cos(ph), R * math.Sin(ph), 0}
			v = [3]float64{-230 * math.Sin(ph), 230 * math.Cos(ph), 0}
			for k := range 3 {
				v[k] += kick * n[k]
			}
			x, v = Advance(p, x, v, 10+90*rng.Float64(), Options{})
		}
		pos, vel := make([][3]float64, nSamples), make([][3]float64, nSamples)
		for j := range nSamples {
			f := 1 + 0.1*rng.NormFloat64()
			for k := range 3 {
				pos[j][k] = sun[k] + f*(x[k]-sun[k])
				vel[j][k] = v[k] + 10*rng.NormFloat64()
			}
		}
		stars[i] = TraceInput{Pos: pos, Vel: vel}
	}
	return stars
}

// BenchmarkTrace1000x200 traces 1000 stars x 200 samples back 300 Myr on
// all cores (target: at most 60 s on 2 cores; run with -benchtime=1x).
func BenchmarkTrace1000x200(b *testing.B) {
	p, err := potential.Builtin(potential.DefaultModel)
	if err != nil {
		b.Fatal(err)
	}
	stars := benchStars(p, 1000, 200, 2026)
	s := TraceSettings{TraceMyr: 300}
	// Work per orbit, counted on a subset outside the timed loop.
	cp := &countingPotential{Potential: p}
	orbits := 0
	for _, st := range stars[:50] {
		Trace(cp, st.Pos, st.Vel, s)
		orbits += len(st.Pos)
	}
	b.ResetTimer()
	var res []TraceResult
	for b.Loop() {
		res = TraceAll(context.Background(), p, stars, s, 0)
	}
	b.StopTimer()
	counts := map[Origin]int{}
	for _, r := range res {
		counts[r.Origin]++
	}
	b.ReportMetric(float64(cp.n)/float64(orbits), "forces/orbit")
	b.ReportMetric(float64(counts[OriginGC]), "gc-stars")
	b.ReportMetric(float64(counts[OriginDisk]), "disk-stars")
	b.ReportMetric(float64(parallel.Workers(0)), "workers")
}

// BenchmarkTrace100x200 is a tenth of BenchmarkTrace1000x200, for profiling.
func BenchmarkTrace100x200(b *testing.B) {
	p, err := potential.Builtin(potential.DefaultModel)
	if err != nil {
		b.Fatal(err)
	}
	stars := benchStars(p, 100, 200, 2026)
	for b.Loop() {
		TraceAll(context.Background(), p, stars, TraceSettings{}, 0)
	}
}
