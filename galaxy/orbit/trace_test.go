package orbit

import (
	"context"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"starvet/galaxy/potential"
	"starvet/internal/units"
)

// samples scatters n copies of (x, v) with Gaussian noise of sigmaXKpc and
// sigmaVKms per axis, seeded.
func samples(seed uint64, n int, x, v [3]float64, sigmaXKpc, sigmaVKms float64) (pos, vel [][3]float64) {
	rng := rand.New(rand.NewPCG(seed, 99))
	for range n {
		var xs, vs [3]float64
		for k := range 3 {
			xs[k] = x[k] + sigmaXKpc*rng.NormFloat64()
			vs[k] = v[k] + sigmaVKms*rng.NormFloat64()
		}
		pos, vel = append(pos, xs), append(vel, vs)
	}
	return pos, vel
}

// ejected flies a star launched radially from 1 pc off the centre along
// unit direction n at speed vKms for tMyr, forward.
func ejected(p potential.Potential, n [3]float64, vKms, tMyr float64) (x, v [3]float64) {
	for k := range 3 {
		x[k] = 1e-3 * n[k]
		v[k] = vKms * n[k]
	}
	return Advance(p, x, v, tMyr, Options{})
}

func unit(lDeg, bDeg float64) [3]float64 {
	l, b := lDeg*units.RadPerDeg, bDeg*units.RadPerDeg
	return [3]float64{math.Cos(b) * math.Cos(l), math.Cos(b) * math.Sin(l), math.Sin(b)}
}

func TestTraceOrigins(t *testing.T) {
	p := builtin(t, potential.DefaultModel)
	xgc, vgc := ejected(p, unit(40, 35), 1000, 80)
	// Disk star: start in the plane at R = 8.1 kpc, fly 30 Myr.
	start := [3]float64{-8.1, 0.5, 0}
	xd, vd := Advance(p, start, [3]float64{15, 225, 25}, 30, Options{})
	// Far above the plane moving away from it: back 50 Myr it is still above.
	xu, vu := [3]float64{5, 3, 40}, [3]float64{50, -30, 150}
	// Outer halo: leaves the plane at R = 40 kpc, flies 30 Myr.
	startO := [3]float64{40, 0, 0}
	xo, vo := Advance(p, startO, [3]float64{20, 30, 120}, 30, Options{})

	tests := []struct {
		name    string
		x, v    [3]float64
		sx, sv  float64
		set     TraceSettings
		origin  Origin
		flight  float64 // expected median flight time, Myr (NaN: none)
		crossXY [2]float64
		xyTol   float64
	}{
		{"gc ejection", xgc, vgc, 0.05, 5, TraceSettings{}, OriginGC, 80, [2]float64{0, 0}, 0.5},
		{"gc exact samples", xgc, vgc, 0, 0, TraceSettings{}, OriginGC, 80, [2]float64{0, 0}, 0.01},
		{"disk", xd, vd, 0.02, 2, TraceSettings{}, OriginDisk, 30, [2]float64{start[0], start[1]}, 0.2},
		{"disk exact samples", xd, vd, 0, 0, TraceSettings{}, OriginDisk, 30, [2]float64{start[0], start[1]}, 1e-3},
		{"outer", xo, vo, 0.1, 3, TraceSettings{}, OriginOuter, 30, [2]float64{startO[0], startO[1]}, 0.2},
		{"untraced", xu, vu, 0.1, 5, TraceSettings{TraceMyr: 50}, OriginUntraced, math.NaN(), [2]float64{}, 0},
		{"gc too short", xgc, vgc, 0.05, 5, TraceSettings{TraceMyr: 40}, OriginUntraced, math.NaN(), [2]float64{}, 0},
	}
	for i, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			pos, vel := samples(uint64(i), 200, tc.x, tc.v, tc.sx, tc.sv)
			r := Trace(p, pos, vel, tc.set)
			t.Logf("origin %s crossed %.2f pGC %.2f D %.3g P %.3g flight %.2f closest %.3g",
				r.Origin, r.FractionCrossed, r.PGCOrigin, r.GCMahalanobis, r.GCConsistency, r.FlightTimeMyr, r.ClosestApproachKpc)
			if r.Origin != tc.origin {
				t.Errorf("origin %q, want %q", r.Origin, tc.origin)
			}
			if r.Samples != 200 {
				t.Errorf("Samples %d", r.Samples)
			}
			if math.IsNaN(tc.flight) {
				if r.FractionCrossed >= 0.5 {
					t.Errorf("fraction crossed %v", r.FractionCrossed)
				}
				return
			}
			if r.FractionCrossed < 0.99 {
				t.Errorf("fraction crossed %v", r.FractionCrossed)
			}
			// The flight time scatters with the velocity noise; 3 per cent.
			if math.Abs(r.FlightTimeMyr-tc.flight) > 0.03*tc.flight {
				t.Errorf("flight time %.3f Myr, want %.1f", r.FlightTimeMyr, tc.flight)
			}
			var mx, my float64
			for _, c := range r.Crossings {
				mx += c.XKpc / float64(len(r.Crossings))
				my += c.YKpc / float64(len(r.Crossings))
			}
			if math.Hypot(mx-tc.crossXY[0], my-tc.crossXY[1]) > tc.xyTol {
				t.Errorf("mean crossing (%.4f, %.4f), want (%.4f, %.4f) within %v", mx, my, tc.crossXY[0], tc.crossXY[1], tc.xyTol)
			}
			if tc.origin == OriginGC {
				// Velocity noise sv over the flight t spreads the crossings by
				// about sqrt(sx^2 + (sv t)^2) per axis (0.41 kpc for the noisy
				// case; 0 for exact samples, where the centre is missed by the
				// 1 pc launch offset and the step floor only).
				spread := math.Hypot(tc.sx, tc.sv*tc.flight/potential.TimeUnitMyr)
				if r.PGCOrigin < 0.6 || r.ClosestApproachKpc > 2.5*spread+0.002 {
					t.Errorf("PGCOrigin %v, closest approach %v kpc", r.PGCOrigin, r.ClosestApproachKpc)
				}
			} else if r.PGCOrigin != 0 || r.GCConsistency < 0.999 {
				t.Errorf("disk star: PGCOrigin %v, GCConsistency %v", r.PGCOrigin, r.GCConsistency)
			}
		})
	}
}

func TestTraceInvalidSamples(t *testing.T) {
	p := builtin(t, potential.DefaultModel)
	x, v := ejected(p, unit(40, 35), 1000, 80)
	pos, vel := samples(5, 10, x, v, 0, 0)
	pos[2][1] = math.NaN()
	vel[7][0] = math.Inf(1)
	r := Trace(p, pos, vel, TraceSettings{})
	if r.InvalidSamples != 2 || len(r.Crossings) != 8 || r.FractionCrossed != 0.8 || r.PGCOrigin != 0.8 {
		t.Errorf("invalid %d, crossings %d, fraction %v, pGC %v; want 2, 8, 0.8, 0.8",
			r.InvalidSamples, len(r.Crossings), r.FractionCrossed, r.PGCOrigin)
	}
	if r.Origin != OriginGC || math.IsNaN(r.ClosestApproachKpc) {
		t.Errorf("origin %q closest %v", r.Origin, r.ClosestApproachKpc)
	}
	// The integrator itself ends at once on a NaN state.
	n := 0
	Integrate(p, [3]float64{math.NaN(), 0, 0}, v, -300, Options{}, func(tm float64, x, _ [3]float64) bool {
		n++
		if n == 2 && (tm != -300 || !math.IsNaN(x[0])) {
			t.Errorf("second visit at %v with x %v", tm, x)
		}
		return true
	})
	if n != 2 {
		t.Errorf("NaN start visited %d times, want 2 (start, end)", n)
	}
}

func TestTraceEmpty(t *testing.T) {
	r := Trace(builtin(t, potential.DefaultModel), nil, nil, TraceSettings{})
	if r.Origin != OriginUntraced || !math.IsNaN(r.FlightTimeMyr) || !math.IsNaN(r.ClosestApproachKpc) {
		t.Errorf("empty trace: %+v", r)
	}
}

func TestCentreDistance(t *testing.T) {
	tests := []struct {
		name string
		cs   []Crossing
		tol  float64
		want float64
	}{
		// Mean (3,1), sample variances 2/3 on both axes, no covariance:
		// D^2 = (9+1)/(2/3) = 15 (hand calculation).
		{"diagonal", []Crossing{{XKpc: 2, YKpc: 1}, {XKpc: 4, YKpc: 1}, {XKpc: 3}, {XKpc: 3, YKpc: 2}}, 1, math.Sqrt(15)},
		// Same set rotated by 45 degrees about the origin: D is invariant.
		{"rotated", rot45([]Crossing{{XKpc: 2, YKpc: 1}, {XKpc: 4, YKpc: 1}, {XKpc: 3}, {XKpc: 3, YKpc: 2}}), 1, math.Sqrt(15)},
		{"identical near centre", []Crossing{{XKpc: 0.3, YKpc: -0.2}, {XKpc: 0.3, YKpc: -0.2}}, 1, 0},
		{"identical far", []Crossing{{XKpc: 8}, {XKpc: 8}, {XKpc: 8}}, 1, math.Inf(1)},
		{"single", []Crossing{{XKpc: 0.5}}, 1, 0},
		// Collinear along x through x = 1..3, y = 0: the y direction is
		// degenerate and the centre lies on the line, so D is the 1-D
		// distance 2/sqrt(var) with var = 1 (hand calculation).
		{"collinear through centre line", []Crossing{{XKpc: 1}, {XKpc: 2}, {XKpc: 3}}, 1, 2},
		{"collinear off line", []Crossing{{XKpc: 1, YKpc: 5}, {XKpc: 2, YKpc: 5}, {XKpc: 3, YKpc: 5}}, 1, math.Inf(1)},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := centreDistance(tc.cs, tc.tol)
			if math.IsInf(tc.want, 1) {
				if !math.IsInf(got, 1) {
					t.Errorf("got %v, want +Inf", got)
				}
				return
			}
			if math.Abs(got-tc.want) > 1e-9*math.Max(1, tc.want) {
				t.Errorf("got %.12g, want %.12g", got, tc.want)
			}
		})
	}
}

func rot45(cs []Crossing) []Crossing {
	c, s := math.Sqrt(0.5), math.Sqrt(0.5)
	out := make([]Crossing, len(cs))
	for i, x := range cs {
		out[i] = Crossing{XKpc: c*x.XKpc - s*x.YKpc, YKpc: s*x.XKpc + c*x.YKpc}
	}
	return out
}

func TestTraceAll(t *testing.T) {
	p := builtin(t, potential.DefaultModel)
	var stars []TraceInput
	for i := range 6 {
		x, v := ejected(p, unit(30*float64(i), 20+5*float64(i)), 700+50*float64(i), 40+10*float64(i))
		pos, vel := samples(uint64(i), 20, x, v, 0.05, 5)
		stars = append(stars, TraceInput{Pos: pos, Vel: vel})
	}
	s := TraceSettings{TraceMyr: 150}
	got := TraceAll(context.Background(), p, stars, s, 2)
	for i, st := range stars {
		want := Trace(p, st.Pos, st.Vel, s)
		if !reflect.DeepEqual(got[i], want) {
			t.Errorf("star %d: parallel result differs from serial", i)
		}
		if got[i].Origin != OriginGC {
			t.Errorf("star %d: origin %q", i, got[i].Origin)
		}
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	for i, r := range TraceAll(ctx, p, stars, s, 2) {
		if r.Origin != "" {
			t.Errorf("cancelled: star %d traced anyway (%q)", i, r.Origin)
		}
	}
}

// TestTraceConverged: crossings with the default step agree with a four
// times finer step (common practice for checking step control), on the
// benchmark's mock candidates.
func TestTraceConverged(t *testing.T) {
	p := builtin(t, potential.DefaultModel)
	stars := benchStars(p, 20, 5, 7)
	worstXY, worstT := 0.0, 0.0
	for i, st := range stars {
		a := Trace(p, st.Pos, st.Vel, TraceSettings{})
		b := Trace(p, st.Pos, st.Vel, TraceSettings{Options: Options{Eta: DefaultEta / 4}})
		if len(a.Crossings) != len(b.Crossings) || a.Origin != b.Origin {
			t.Fatalf("star %d: %d crossings (%s) vs %d (%s) with finer steps", i, len(a.Crossings), a.Origin, len(b.Crossings), b.Origin)
		}
		for k := range a.Crossings {
			ca, cb := a.Crossings[k], b.Crossings[k]
			worstXY = math.Max(worstXY, math.Hypot(ca.XKpc-cb.XKpc, ca.YKpc-cb.YKpc))
			worstT = math.Max(worstT, math.Abs(ca.TMyr-cb.TMyr))
		}
	}
	t.Logf("worst crossing difference %.2g kpc, %.2g Myr", worstXY, worstT)
	if worstXY > 0.01 || worstT > 0.05 {
		t.Errorf("crossings move by %.3g kpc / %.3g Myr with a finer step", worstXY, worstT)
	}
}
