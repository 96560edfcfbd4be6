package vec

import (
	"math"
	"testing"
)

func TestDotNorm(t *testing.T) {
	if got := Dot([3]float64{1, 2, 3}, [3]float64{4, -5, 6}); got != 12 {
		t.Errorf("Dot = %v, want 12", got)
	}
	if got := Norm([3]float64{2, -3, 6}); got != 7 {
		t.Errorf("Norm = %v, want 7", got)
	}
	// Norm is the square root of Dot(x, x), bit for bit.
	x := [3]float64{0.1, 1.0 / 3, math.Pi}
	if Norm(x) != math.Sqrt(Dot(x, x)) {
		t.Errorf("Norm(%v) = %.17g, sqrt(Dot) = %.17g", x, Norm(x), math.Sqrt(Dot(x, x)))
	}
}

func TestFinite(t *testing.T) {
	for _, c := range []struct {
		x    float64
		want bool
	}{{0, true}, {-1e308, true}, {math.NaN(), false}, {math.Inf(1), false}, {math.Inf(-1), false}} {
		if got := Finite(c.x); got != c.want {
			t.Errorf("Finite(%v) = %v", c.x, got)
		}
		v := [3]float64{1, 2, 3}
		for i := range 3 {
			w := v
			w[i] = c.x
			if got := Finite3(w); got != c.want {
				t.Errorf("Finite3(%v) = %v", w, got)
			}
		}
	}
}
