package vec

import "math"

// Dot returns a.b, summed in component order.
func Dot(a, b [3]float64) float64 { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }

// Norm returns |x|.
func Norm(x [3]float64) float64 { return math.Sqrt(x[0]*x[0] + x[1]*x[1] + x[2]*x[2]) }

// Finite reports whether x is neither NaN nor infinite.
func Finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// Finite3 reports whether every component of v is finite.
func Finite3(v [3]float64) bool { return Finite(v[0]) && Finite(v[1]) && Finite(v[2]) }
