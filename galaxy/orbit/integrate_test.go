package orbit

import (
	"fmt"
	"math"
	"testing"

	"starvet/galaxy/potential"
)

func builtin(t testing.TB, name string) *potential.Model {
	t.Helper()
	m, err := potential.Builtin(name)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func energy(p potential.Potential, x, v [3]float64) float64 {
	return 0.5*(v[0]*v[0]+v[1]*v[1]+v[2]*v[2]) + p.Phi(x)
}

// TestEnergyDrift: a symplectic, time-symmetric integrator keeps the energy
// error bounded (common practice); the brief asks below 1e-5 relative over
// 1 Gyr for a bound disk orbit.
func TestEnergyDrift(t *testing.T) {
	tests := []struct {
		name string
		x, v [3]float64
	}{
		{"near-circular", [3]float64{-8.122, 0, 0.02}, [3]float64{11, 225, 7}},
		{"eccentric thick", [3]float64{-8.122, 0, 0.5}, [3]float64{-90, 160, 60}},
	}
	for _, model := range potential.BuiltinNames() {
		p := builtin(t, model)
		for _, tc := range tests {
			t.Run(model+"/"+tc.name, func(t *testing.T) {
				e0 := energy(p, tc.x, tc.v)
				if e0 >= 0 {
					t.Fatalf("orbit not bound: E = %v", e0)
				}
				worst, steps := 0.0, 0
				Integrate(p, tc.x, tc.v, 1000, Options{}, func(_ float64, x, v [3]float64) bool {
					steps++
					worst = math.Max(worst, math.Abs(energy(p, x, v)/e0-1))
					return true
				})
				if worst > 1e-5 {
					t.Errorf("max relative energy error %.3g over 1 Gyr (%d steps)", worst, steps)
				}
				t.Logf("max |dE/E| = %.2g in %d steps", worst, steps)
			})
		}
	}
}

// TestReversibility: integrate forward, flip, integrate the same time again
// and compare with the start (time symmetry of leapfrog with a symmetric
// step, Hut, Makino & McMillan 1995, ApJ 443, L93).
func TestReversibility(t *testing.T) {
	p := builtin(t, "kenyon08-adjusted")
	tests := []struct {
		name string
		x, v [3]float64
		tMyr float64
	}{
		{"disk 1 Gyr", [3]float64{-8.122, 0, 0.02}, [3]float64{10, 220, 15}, 1000},
		{"through centre", [3]float64{3, 0.01, 4}, [3]float64{-400, 0, -520}, 200},
		{"backward first", [3]float64{20, -5, 30}, [3]float64{300, 200, 400}, -300},
	}
	for _, tc := range tests {
		for _, iterate := range []bool{false, true} {
			opt := Options{IterateStep: iterate}
			t.Run(fmt.Sprintf("%s/iterate=%v", tc.name, iterate), func(t *testing.T) {
				x1, v1 := Advance(p, tc.x, tc.v, tc.tMyr, opt)
				x2, v2 := Advance(p, x1, v1, -tc.tMyr, opt)
				var dx, dv float64
				for k := range 3 {
					dx = math.Max(dx, math.Abs(x2[k]-tc.x[k]))
					dv = math.Max(dv, math.Abs(v2[k]-tc.v[k]))
				}
				// Tight: a few 1e-5 kpc (0.01 pc) after ~1e4 steps; exact
				// reversibility holds only for the converged symmetric step.
				if dx > 2e-5 || dv > 2e-4 {
					t.Errorf("returned off by %.3g kpc, %.3g km/s", dx, dv)
				}
				t.Logf("return error %.2g kpc, %.2g km/s", dx, dv)
			})
		}
	}
}

// TestKeplerPeriod: in a point-mass potential an ellipse of semi-major axis
// a has period T = 2 pi sqrt(a^3/GM) (Kepler's third law); started at
// pericentre with the vis-viva speed v^2 = GM(2/r - 1/a).
func TestKeplerPeriod(t *testing.T) {
	const mass = 1e11
	p, err := potential.New([]potential.Component{{Kind: potential.KindPoint, MassMsun: mass}})
	if err != nil {
		t.Fatal(err)
	}
	gm := potential.G * mass
	// Leapfrog phase errors scale as Eta^2 (common practice): 2e-4 at the
	// default Eta for e = 0.9, 25 times less at Eta/5.
	for _, tc := range []struct{ aKpc, e, eta, tol float64 }{
		{10, 0, 0, 5e-5}, {10, 0.5, 0, 2e-4}, {30, 0.9, 0, 4e-4},
		{30, 0.9, DefaultEta / 5, 2e-5},
	} {
		t.Run("", func(t *testing.T) {
			rp := tc.aKpc * (1 - tc.e)
			vp := math.Sqrt(gm * (2/rp - 1/tc.aKpc))
			want := 2 * math.Pi * math.Sqrt(tc.aKpc*tc.aKpc*tc.aKpc/gm) * potential.TimeUnitMyr
			// Measure times of crossing the +x axis (y from - to +).
			var cross []float64
			var pt float64
			var px [3]float64
			Integrate(p, [3]float64{rp, 0, 0}, [3]float64{0, vp, 0}, 3.2*want, Options{Eta: tc.eta}, func(tm float64, x, _ [3]float64) bool {
				if tm > 0 && px[1] < 0 && x[1] >= 0 && x[0] > 0 {
					f := px[1] / (px[1] - x[1])
					cross = append(cross, pt+f*(tm-pt))
				}
				pt, px = tm, x
				return true
			})
			if len(cross) < 3 {
				t.Fatalf("only %d pericentre passages", len(cross))
			}
			got := (cross[2] - cross[0]) / 2
			t.Logf("a=%v e=%v eta=%v: rel err %.2g", tc.aKpc, tc.e, tc.eta, math.Abs(got/want-1))
			if e := math.Abs(got/want - 1); e > tc.tol {
				t.Errorf("a=%v e=%v: period %.6g Myr, want %.6g (rel err %.2g)", tc.aKpc, tc.e, got, want, e)
			}
		})
	}
}

func TestIntegrateEndpoints(t *testing.T) {
	p := builtin(t, potential.DefaultModel)
	x0, v0 := [3]float64{-8, 0, 0.1}, [3]float64{0, 230, 10}
	var ts []float64
	var lastX, lastV [3]float64
	Integrate(p, x0, v0, -123.4, Options{}, func(tm float64, x, v [3]float64) bool {
		ts = append(ts, tm)
		lastX, lastV = x, v
		return true
	})
	if ts[0] != 0 || ts[len(ts)-1] != -123.4 {
		t.Errorf("times run %v .. %v, want 0 .. -123.4", ts[0], ts[len(ts)-1])
	}
	for i := 1; i < len(ts); i++ {
		if !(ts[i] < ts[i-1]) {
			t.Fatalf("times not decreasing at %d: %v then %v", i, ts[i-1], ts[i])
		}
	}
	ax, av := Advance(p, x0, v0, -123.4, Options{})
	if ax != lastX || av != lastV {
		t.Errorf("Advance %v %v differs from Integrate %v %v", ax, av, lastX, lastV)
	}
	// Early stop.
	n := 0
	Integrate(p, x0, v0, 100, Options{}, func(float64, [3]float64, [3]float64) bool { n++; return n < 5 })
	if n != 5 {
		t.Errorf("visit called %d times after returning false at 5", n)
	}
	// Zero time returns the input.
	if x, v := Advance(p, x0, v0, 0, Options{}); x != x0 || v != v0 {
		t.Errorf("Advance(0) changed the state")
	}
}
