package kinematics

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"starvet/galaxy/frames"
	"starvet/internal/units"
	"starvet/internal/vec"
)

// The interpolated escape speed must match sqrt(2 (Phi_lim - Phi)) computed
// directly, on ordinary lines of sight and on ones grazing the centre.
func TestLineOfSightEscapeTable(t *testing.T) {
	sun := frames.DefaultSun()
	raGC, decGC := frames.GalacticToICRS(0, 0)
	raNear, decNear := frames.GalacticToICRS(0.002, 0.001)
	cases := []struct {
		name             string
		ra, dec          float64 // rad
		dMin, dMax, rLim float64
	}{
		{"halo", 2.1, 0.4, 0.5, 25, 0},
		{"halo-escape-radius", 2.1, 0.4, 0.5, 25, 200},
		{"far", 4, -1, 10, 150, 0},
		{"narrow", 1, 0.2, 3.999, 4.001, 0},
		{"toward-centre", raGC, decGC, 6, 10, 0},
		{"near-centre", raNear, decNear, 2, 14, 0},
		{"near-centre-escape-radius", raNear, decNear, 2, 14, 50},
		{"straddles-escape-radius", 2.1, 0.4, 10, 300, 100},
	}
	for _, pot := range []struct {
		name string
		p    sumPotential
	}{{"bulge-halo", milkyWayTest()}, {"bulge-disk-halo", milkyWayBench()}} {
		for _, tc := range cases {
			t.Run(pot.name+"/"+tc.name, func(t *testing.T) {
				l := newLineOfSight(sun, tc.ra/units.RadPerDeg, tc.dec/units.RadPerDeg)
				var tab losEscape
				tab.build(pot.p, &l, tc.dMin, tc.dMax, tc.rLim, 125)
				t.Logf("table used: %v (%d nodes)", tab.ok, len(tab.psi))
				if !tab.ok {
					return
				}
				rnd := rand.New(rand.NewPCG(1, 1))
				worst := 0.0
				for range 5000 {
					d := tc.dMin + (tc.dMax-tc.dMin)*rnd.Float64()
					pos, _ := l.at(d, 0, 0, 0)
					exact := escapeSpeed(pot.p, pos, vec.Norm(pos), tc.rLim)
					worst = math.Max(worst, math.Abs(tab.vesc(d)-exact))
				}
				t.Logf("worst error %.2g km/s", worst)
				if worst > 2*vescTolKms {
					t.Errorf("worst escape-speed error %.3g km/s", worst)
				}
			})
		}
	}
}

// The table must be in use for ordinary stars (else it saves nothing) and
// switched off when the draws do not spread.
func TestLineOfSightEscapeTableUse(t *testing.T) {
	stars := benchStars(200)
	set := testSettings()
	used := 0
	var w worker
	var r Result
	for i := range stars {
		w.evaluate(&stars[i], &set, milkyWayBench(), &r)
		if w.esc.ok {
			used++
		}
	}
	t.Logf("table used for %d of 200 stars", used)
	if used < 190 {
		t.Errorf("table used for %d of 200 stars", used)
	}
	s := baseStar("fixed")
	s.ParallaxErrMas = 0
	w.evaluate(&s, &set, milkyWayBench(), &r)
	if w.esc.ok {
		t.Error("table built for a single distance")
	}
}

// Whole results with the table and with exact escape speeds agree: escape
// speeds within 2e-4 km/s, p_unbound to a draw or so.
func TestLineOfSightEscapeTableResults(t *testing.T) {
	stars := benchStars(300)
	set := testSettings()
	set.EscapeRadiusKpc = 80
	var fast, exact worker
	exact.exactEscape = true
	flips := 0
	for i := range stars {
		var a, b Result
		fast.evaluate(&stars[i], &set, milkyWayBench(), &a)
		exact.evaluate(&stars[i], &set, milkyWayBench(), &b)
		for k := range 3 {
			if math.IsNaN(a.VEscKms[k]) && math.IsNaN(b.VEscKms[k]) {
				continue // only the median is computed
			}
			if d := math.Abs(a.VEscKms[k] - b.VEscKms[k]); d > 2*vescTolKms || math.IsNaN(d) {
				t.Fatalf("star %s: v_esc %v vs exact %v", stars[i].ID, a.VEscKms, b.VEscKms)
			}
		}
		pa, pb := a.PUnbound, b.PUnbound
		if !a.HasRV {
			pa, pb = a.PUnboundLower, b.PUnboundLower
		}
		flips += int(math.Round(math.Abs(pa-pb) * float64(a.Samples)))
	}
	if flips > 3 {
		t.Errorf("%d draws changed bound/unbound over 300 stars", flips)
	}
}

// The tables evaluate builds for invented stars of every kind, swept finely
// over their whole range (not only at the points the refinement checks):
// within 2e-4 km/s of the exact escape speed everywhere.
func TestLineOfSightEscapeTableStars(t *testing.T) {
	stars := benchStars(300)
	for _, rLim := range []float64{0, 80} {
		t.Run(fmt.Sprint("escape-radius-", rLim), func(t *testing.T) {
			set := testSettings()
			set.EscapeRadiusKpc = rLim
			p := milkyWayBench()
			var w worker
			var r Result
			tables, worst := 0, 0.0
			for i := range stars {
				w.evaluate(&stars[i], &set, p, &r)
				if !w.esc.ok {
					continue
				}
				tables++
				l := newLineOfSight(set.Sun, stars[i].RADeg, stars[i].DecDeg)
				lo, hi := w.esc.d[0], w.esc.d[len(w.esc.d)-1]
				for k := range 2001 {
					d := lo + (hi-lo)*float64(k)/2000
					pos, _ := l.at(d, 0, 0, 0)
					if e := math.Abs(w.esc.vesc(d) - escapeSpeed(p, pos, vec.Norm(pos), rLim)); e > worst {
						worst = e
					}
				}
			}
			t.Logf("%d tables, worst error %.2g km/s", tables, worst)
			if tables < 250 || worst > 2*vescTolKms {
				t.Errorf("%d tables, worst error %.3g km/s", tables, worst)
			}
		})
	}
}
