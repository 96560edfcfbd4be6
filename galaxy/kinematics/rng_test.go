package kinematics

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The stream is math/rand/v2's PCG with its Float64 and NormFloat64, bit
// for bit: the tables computed from the Marsaglia & Tsang set-up agree with
// the library's (every strip, rectangle, wedge and tail path is exercised
// by 2e6 normal draws: about 1.2% of draws leave the rectangles).
func TestStreamMatches(t *testing.T) {
	for _, seed := range [][2]uint64{{1, 2}, {20261201, 7}, {0, 0}} {
		var s stream
		s.seed(seed[0], seed[1])
		ref := rand.New(rand.NewPCG(seed[0], seed[1]))
		for i := range 1000 {
			if a, b := s.Uint64(), ref.Uint64(); a != b {
				t.Fatalf("seed %v draw %d: Uint64 %x, want %x", seed, i, a, b)
			}
			if a, b := s.float64(), ref.Float64(); a != b {
				t.Fatalf("seed %v draw %d: float64 %v, want %v", seed, i, a, b)
			}
		}
		edge := 0
		for i := range 2000000 {
			a, b := s.norm(), ref.NormFloat64()
			if a != b {
				t.Fatalf("seed %v draw %d: norm %v, want %v", seed, i, a, b)
			}
			if a > 3.4 || a < -3.4 {
				edge++
			}
		}
		if edge == 0 {
			t.Errorf("seed %v: no tail draw", seed)
		}
	}
}

// TestNormalsMatchNorm: the batched fill draws what norm draws, and
// leaves the stream where norm leaves it.
func TestNormalsMatchNorm(t *testing.T) {
	var a, b stream
	a.seed(3, 4)
	b.seed(3, 4)
	z := make([]float64, 4099)
	for range 200 {
		a.normals(z)
		for i, x := range z {
			if y := b.norm(); math.Float64bits(x) != math.Float64bits(y) {
				t.Fatalf("draw %d: %v, want %v", i, x, y)
			}
		}
	}
	if a != b {
		t.Fatalf("state %v, want %v", a, b)
	}
}

// BenchmarkNorm: one normal draw, the stream against rand.Rand on a PCG.
func BenchmarkNorm(b *testing.B) {
	var sum float64
	b.Run("stream", func(b *testing.B) {
		var s stream
		s.seed(1, 2)
		for b.Loop() {
			sum += s.norm()
		}
	})
	b.Run("math-rand", func(b *testing.B) {
		ref := rand.New(rand.NewPCG(1, 2))
		for b.Loop() {
			sum += ref.NormFloat64()
		}
	})
	_ = sum
}
