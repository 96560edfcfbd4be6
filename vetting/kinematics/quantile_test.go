package kinematics

import (
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
