package healpix

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// b.Loop keeps the call from being optimised away (Go 1.24+).
func BenchmarkAng2PixNest(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 1024
	var theta, phi [n]float64
	for i := range n {
		theta[i] = math.Acos(2*rng.Float64() - 1)
		phi[i] = 2 * math.Pi * rng.Float64()
	}
	for _, order := range []int{12, 29} {
		b.Run("order="+strconv.Itoa(order), func(b *testing.B) {
			i := 0
			for b.Loop() {
				Ang2PixNest(order, theta[i%n], phi[i%n])
				i++
			}
		})
	}
}
