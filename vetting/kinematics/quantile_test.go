package kinematics

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
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
