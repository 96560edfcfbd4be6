package scenario

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// haloCDF is the cumulative distribution of f = v / v_esc under the halo's
// speed law (haloFraction): f^2 up to f0, then f0^2 ((1 - f)/(1 - f0))^k,
// integrated (analytic).
func haloCDF(f float64) float64 {
	const f0, k1 = haloBulkEdge, haloTailIndex + 1
	bulk, tail := f0*f0*f0/3, f0*f0*(1-f0)/k1
	if f < f0 {
		return f * f * f / 3 / (bulk + tail)
	}
	return (bulk + tail*(1-math.Pow((1-f)/(1-f0), k1))) / (bulk + tail)
}

// ksDistance is the Kolmogorov-Smirnov distance between the sample xs and
// the CDF (common practice).
func ksDistance(xs []float64, cdf func(float64) float64) float64 {
	sort.Float64s(xs)
	n := float64(len(xs))
	var d float64
	for i, x := range xs {
		c := cdf(x)
		d = max(d, math.Abs(c-float64(i)/n), math.Abs(float64(i+1)/n-c))
	}
	return d
}

// TestHaloSpeedLaw: the halo's speeds in units of the local escape speed
// follow the stated law, whole and conditioned on f >= 0.5 (the fast
// halo's case), and the fast halo's speeds at a position follow the tail
// law conditioned on v >= haloFastMinKms. The Kolmogorov-Smirnov distance
// of 100,000 draws must stay below 1.95/sqrt(n), the 0.1 per cent critical
// value (common practice; Massey 1951, JASA 46, 68, from memory).
func TestHaloSpeedLaw(t *testing.T) {
	const n = 100000
	crit := 1.95 / math.Sqrt(n)
	g, err := newGalaxy(1)
	if err != nil {
		t.Fatal(err)
	}
	s := &sampler{g: g, rng: rand.New(rand.NewPCG(11, 12))}
	x := [3]float64{-12, 3, 4}
	vesc := g.vesc(x)
	fMinAt := haloFastMinKms / vesc
	for _, c := range []struct {
		name string
		draw func() float64
		cdf  func(float64) float64
	}{
		{"whole law", func() float64 { return s.haloFraction(0) }, haloCDF},
		{"f >= 0.5", func() float64 { return s.haloFraction(0.5) }, func(f float64) float64 {
			return 1 - math.Pow((1-f)/0.5, haloTailIndex+1)
		}},
		{"fast halo velocity at 13 kpc", func() float64 { v := s.haloVelocity(x, fMinAt); return speed(v) / vesc }, func(f float64) float64 {
			return 1 - math.Pow((1-f)/(1-fMinAt), haloTailIndex+1)
		}},
	} {
		xs := make([]float64, n)
		for i := range xs {
			xs[i] = c.draw()
		}
		if d := ksDistance(xs, c.cdf); d > crit {
			t.Errorf("%s: KS distance %.4f > %.4f", c.name, d, crit)
		}
	}
	if !(fMinAt > haloBulkEdge) {
		t.Fatalf("test position: threshold f %v not above the bulk edge %v", fMinAt, haloBulkEdge)
	}
}

// TestHaloTailEdgeBelowVMin: the halo's law is the tail law above
// haloBulkEdge v_esc(x), which must lie below the tail method's v_min of
// 300 km/s (inference.DefaultVMinKms) at every radius a halo star can have
// (1-60 kpc) in the plane, toward the pole and between, for haloes 0.5-2
// times the default; the fast halo's threshold must lie below it too.
func TestHaloTailEdgeBelowVMin(t *testing.T) {
	const vMinKms = 300
	if haloFastMinKms >= vMinKms {
		t.Errorf("fast halo threshold %v km/s not below v_min", float64(haloFastMinKms))
	}
	for _, hs := range []float64{0.5, 1, 2} {
		g, err := newGalaxy(hs)
		if err != nil {
			t.Fatal(err)
		}
		top := 0.0
		for r := 1.0; r <= 60; r += 0.25 {
			for _, a := range []float64{0, math.Pi / 6, math.Pi / 4, math.Pi / 3, math.Pi / 2} {
				top = max(top, g.vesc([3]float64{r * math.Cos(a), 0, r * math.Sin(a)}))
			}
		}
		if e := haloBulkEdge * top; e >= vMinKms {
			t.Errorf("halo x%v: bulk edge %.0f km/s (v_esc up to %.0f) not below v_min", hs, e, top)
		}
	}
}
