package kinematics

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// Parallax cases for the EDSD checks (mas): from well measured to negative.
var edsdCases = []struct{ w, s float64 }{
	{2, 0.1}, {0.5, 0.2}, {0.3, 0.25}, {0.1, 0.2}, {0.02, 1}, {-0.3, 0.2}, {-1, 0.5},
}

const edsdL = 1.35 // kpc (Astraatmadja & Bailer-Jones 2016, ApJ 833, 119)

// The cubic's mode (Bailer-Jones 2015, PASP 127, 994, eq. 19, from memory)
// must be the maximum of the posterior found by brute force, and the peak
// of the samples' histogram.
func TestEDSDMode(t *testing.T) {
	for _, tc := range edsdCases {
		t.Run(fmt.Sprint(tc.w, "+-", tc.s), func(t *testing.T) {
			modes := edsdModes(tc.w, tc.s, edsdL)
			if len(modes) != 1 {
				t.Fatalf("modes %v", modes)
			}
			mode := modes[0]
			if g := edsdCubic(mode, tc.w, tc.s, edsdL); math.Abs(g) > 1e-6*(1/(tc.s*tc.s)) {
				t.Errorf("cubic at mode %v = %v", mode, g)
			}
			// Brute force on a fine log grid, 1 pc .. 1000 kpc.
			best, bestLog := 0.0, math.Inf(-1)
			for i := range 600001 {
				r := math.Pow(10, -3+6*float64(i)/600000)
				if l := edsdLogPDF(r, tc.w, tc.s, edsdL); l > bestLog {
					best, bestLog = r, l
				}
			}
			if math.Abs(best-mode) > 3e-5*mode {
				t.Errorf("cubic mode %v, brute-force maximum %v", mode, best)
			}
			// Histogram of samples.
			var tab edsdTable
			if !tab.build(tc.w, tc.s, edsdL) {
				t.Fatal("build failed")
			}
			rnd := rand.New(rand.NewPCG(5, 6))
			const n = 400000
			x := make([]float64, n)
			for i := range x {
				x[i] = tab.quantile(rnd.Float64())
			}
			q := percentiles(slices.Clone(x))
			bin := (q[2] - q[0]) / 30
			lo := math.Max(0, mode-3*(q[2]-q[0]))
			counts := make([]int, 200)
			for _, v := range x {
				if k := int((v - lo) / bin); k >= 0 && k < len(counts) {
					counts[k]++
				}
			}
			k := 0
			for i, c := range counts {
				if c > counts[k] {
					k = i
				}
			}
			peak := lo + (float64(k)+0.5)*bin
			if math.Abs(peak-mode) > 1.5*bin {
				t.Errorf("histogram peak %v, mode %v (bin %v)", peak, mode, bin)
			}
		})
	}
}

// referenceCDF integrates the unnormalised posterior with Gauss-Legendre
// quadrature on a uniform grid, independent of edsdTable.
type referenceCDF struct {
	w, s, step float64
	cum        []float64
}

func newReferenceCDF(w, s float64) *referenceCDF {
	const rMax, pieces = 120.0, 6000
	c := &referenceCDF{w: w, s: s, step: rMax / pieces, cum: make([]float64, pieces+1)}
	for j := 1; j <= pieces; j++ {
		c.cum[j] = c.cum[j-1] + c.integral(float64(j-1)*c.step, float64(j)*c.step)
	}
	return c
}

func (c *referenceCDF) integral(a, b float64) float64 {
	f := func(r float64) float64 {
		if r <= 0 {
			return 0
		}
		return math.Exp(edsdLogPDF(r, c.w, c.s, edsdL))
	}
	return quad.Fixed(f, a, b, 12, quad.Legendre{}, 0)
}

func (c *referenceCDF) at(r float64) float64 {
	j := min(int(r/c.step), len(c.cum)-1)
	return (c.cum[j] + c.integral(float64(j)*c.step, r)) / c.cum[len(c.cum)-1]
}

// Kolmogorov-Smirnov check of the sampler against the analytic posterior.
// The 1% critical value of D is 1.63/sqrt(N) (Smirnov 1948, Ann. Math.
// Stat. 19, 279, asymptotic).
func TestEDSDSamplerKS(t *testing.T) {
	const n = 20000
	for _, tc := range edsdCases {
		t.Run(fmt.Sprint(tc.w, "+-", tc.s), func(t *testing.T) {
			ref := newReferenceCDF(tc.w, tc.s)
			var tab edsdTable
			if !tab.build(tc.w, tc.s, edsdL) {
				t.Fatal("build failed")
			}
			// The table itself agrees with the quadrature.
			for _, u := range []float64{0.01, 0.16, 0.5, 0.84, 0.99} {
				r := tab.quantile(u)
				if got := ref.at(r); math.Abs(got-u) > 1e-4 {
					t.Errorf("table quantile %v -> r %v, reference cdf %v", u, r, got)
				}
				if got := tab.cdfAt(r); math.Abs(got-u) > 1e-9 {
					t.Errorf("quantile and cdfAt disagree: %v vs %v", u, got)
				}
			}
			rnd := rand.New(rand.NewPCG(9, 10))
			x := make([]float64, n)
			for i := range x {
				x[i] = tab.quantile(rnd.Float64())
			}
			slices.Sort(x)
			d := 0.0
			for i, v := range x {
				f := ref.at(v)
				d = math.Max(d, math.Max(math.Abs(f-float64(i)/n), math.Abs(float64(i+1)/n-f)))
			}
			if crit := 1.63 / math.Sqrt(n); d > crit {
				t.Errorf("KS D = %.5f > %.5f", d, crit)
			}
		})
	}
}

// The whole EDSD path: Evaluate's distance percentiles are the posterior's.
func TestEDSDEvaluatePercentiles(t *testing.T) {
	s := baseStar("edsd-pct")
	s.ParallaxMas, s.ParallaxErrMas = 0.3, 0.25
	set := testSettings()
	set.Samples = 20000
	r := eval(s, set)
	if r.Method != MethodEDSD {
		t.Fatalf("method %s", r.Method)
	}
	ref := newReferenceCDF(0.3, 0.25)
	for k, p := range percentileLevels {
		// Standard error of a sample quantile: sqrt(p(1-p)/N) in probability.
		if got := ref.at(r.DistKpc[k]); math.Abs(got-p) > 4*math.Sqrt(p*(1-p)/20000) {
			t.Errorf("percentile %v: distance %v has reference cdf %v", p, r.DistKpc[k], got)
		}
	}
}

// The tabulated quantile function over the whole range: at 999 levels u
// the reference CDF of the returned distance is u within 1e-4 (the bound
// of TestEDSDSamplerKS, here on a fine sweep instead of five points).
func TestEDSDTableAccuracy(t *testing.T) {
	for _, tc := range edsdCases {
		t.Run(fmt.Sprint(tc.w, "+-", tc.s), func(t *testing.T) {
			ref := newReferenceCDF(tc.w, tc.s)
			var tab edsdTable
			if !tab.build(tc.w, tc.s, edsdL) {
				t.Fatal("build failed")
			}
			worst := 0.0
			for i := 1; i < 1000; i++ {
				u := float64(i) / 1000
				worst = math.Max(worst, math.Abs(ref.at(tab.quantile(u))-u))
			}
			t.Logf("worst CDF error %.2g", worst)
			if worst > 1e-4 {
				t.Errorf("worst CDF error %.3g", worst)
			}
		})
	}
}
