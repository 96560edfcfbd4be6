package kinematics

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"starvet/internal/vec"
)

// TestMedianMatchesPercentiles: median is the middle value of percentiles
// (the same Hyndman & Fan definition 7), for odd and even lengths.
func TestMedianMatchesPercentiles(t *testing.T) {
	rnd := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 2, 3, 10, 11, 1000, 1001} {
		a := make([]float64, n)
		for i := range a {
			a[i] = rnd.NormFloat64()
		}
		b := slices.Clone(a)
		if got, want := median(a)[1], percentiles(b)[1]; got != want {
			t.Errorf("n=%d: median %v, percentiles %v", n, got, want)
		}
	}
}

// A value stored through a monotone map gives the percentiles of the
// unmapped values once the map is undone on the order statistics: here
// speeds stored as squares (order is kept by x -> x^2 for x >= 0).
func TestPercentilesMonotoneMap(t *testing.T) {
	rnd := rand.New(rand.NewPCG(5, 6))
	var q quantiler
	for _, n := range []int{1, 2, 7, 1000, 1001} {
		a := make([]float64, n)
		sq := make([]float64, n)
		for i := range a {
			a[i] = 300 * math.Abs(rnd.NormFloat64())
			sq[i] = a[i] * a[i]
		}
		want := percentiles(slices.Clone(a))
		got := q.percentiles(sq, math.Sqrt)
		wantMed := median(slices.Clone(a))
		gotMed := q.median(slices.Clone(sq), math.Sqrt)
		for k := range 3 {
			if math.Abs(got[k]-want[k]) > 1e-12*want[k] {
				t.Errorf("n=%d p%d: %v from squares, want %v", n, k, got[k], want[k])
			}
		}
		if math.Abs(gotMed[1]-wantMed[1]) > 1e-12*wantMed[1] {
			t.Errorf("n=%d median: %v from squares, want %v", n, gotMed[1], wantMed[1])
		}
	}
}

// medianOfMonotone against selection, for increasing and decreasing maps
// and odd and even counts.
func TestMedianOfMonotone(t *testing.T) {
	rnd := rand.New(rand.NewPCG(7, 8))
	for _, n := range []int{1, 2, 3, 10, 11, 1000, 1001} {
		for _, tc := range []struct {
			name string
			f    func(float64) float64
			inc  bool
		}{{"increasing", func(x float64) float64 { return x * x * x }, true}, {"decreasing", func(x float64) float64 { return math.Exp(-x) }, false}} {
			x := make([]float64, n)
			fx := make([]float64, n)
			for i := range x {
				x[i] = rnd.NormFloat64()
				fx[i] = tc.f(x[i])
			}
			var q quantiler
			_, mid := q.percentilesMid(slices.Clone(x), nil)
			got := medianOfMonotone(tc.f, mid, tc.inc, nil)[1]
			want := median(fx)[1]
			if math.Abs(got-want) > 1e-15*math.Abs(want) {
				t.Errorf("n=%d %s: %v, selection %v", n, tc.name, got, want)
			}
		}
	}
}

// Whole stars: the r_gc and v_esc medians taken from the distance's middle
// order statistics equal the selection over the per-draw values, the
// shortcuts are taken for most stars, and p_unbound, for which draws
// outside the escape-speed range skip the lookup, equals a full recount.
func TestMonotoneMediansInEvaluate(t *testing.T) {
	stars := benchStars(300)
	set := testSettings()
	var w worker
	var r Result
	var q quantiler
	rgcShort, vescShort := 0, 0
	for i := range stars {
		w.evaluate(&stars[i], &set, newBenchGalaxy(), &r)
		if !r.OK {
			continue
		}
		n := r.Samples
		dMin, dMax := span(w.dist[:n])
		l := newLineOfSight(set.Sun, stars[i].RADeg, stars[i].DecDeg)
		if _, ok := l.r2Monotone(dMin, dMax); ok {
			rgcShort++
		}
		if w.esc.ok && w.esc.monotone != 0 {
			vescShort++
		}
		// v_esc^2 per draw, recomputed: evaluate skips the draws it does
		// not need.
		ve2 := make([]float64, n)
		for k := range n {
			if w.esc.ok {
				ve2[k] = w.esc.vesc2(w.dist[k])
			} else {
				pos, _ := l.at(w.dist[k], 0, 0, 0)
				ve2[k] = escapeSpeed2(newBenchGalaxy(), pos, vec.Norm(pos), set.EscapeRadiusKpc)
			}
		}
		// p_unbound counts every draw, looked up or not.
		unbound := 0
		for k := range n {
			if w.speed2[k] > ve2[k] {
				unbound++
			}
		}
		p := r.PUnbound
		if !r.HasRV {
			p = r.PUnboundLower
		}
		if got := int(math.Round(p * float64(n))); got != unbound {
			t.Fatalf("star %s: %d unbound draws, recount %d", stars[i].ID, got, unbound)
		}
		for _, c := range []struct {
			name      string
			got       float64
			perDrawSq []float64
		}{{"r_gc", r.RGCKpc[1], w.rgc2[:n]}, {"v_esc", r.VEscKms[1], ve2}} {
			want := q.median(c.perDrawSq, math.Sqrt)[1]
			if math.Abs(c.got-want) > 1e-13*want {
				t.Fatalf("star %s: %s median %v, selection %v", stars[i].ID, c.name, c.got, want)
			}
		}
	}
	t.Logf("shortcut for r_gc %d, v_esc %d of %d stars", rgcShort, vescShort, len(stars))
	if rgcShort < len(stars)/3 || vescShort < len(stars)/3 {
		t.Errorf("shortcuts rarely taken: r_gc %d, v_esc %d of %d", rgcShort, vescShort, len(stars))
	}
}
