package inference

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"starvet/db"
	"starvet/galaxy/weigh"
	"starvet/scenario"
	"starvet/vetting"
)

// Recovery of the simulated halo from invented scenarios: three true halo
// masses (the default model's NFW mass times 0.5, 1 and 2), recoverySeeds
// seeds each, every scenario vetted and weighed with the default options
// (InfallOnly on, as the demo).
//
// The targets: each method's 90 per cent interval contains its own
// truth in at least 80 per cent of the seeds at every mass; the lightest and
// heaviest halo are told apart; a halo twice the campaign model's still
// recovers its own escape speed. All are asserted at the bounds.
//
// Measured 2026-12-04, with the ejection score from each draw's velocity
// law and DefaultEjection's smooth law (STARVET_RECOVERY_EJECTEES=1 go
// test ./inference -run TestWeighRecovery -v: 382 s on 2 cores for the
// three sets; every scenario is seeded, so the figures are reproducible):
//   - velocity tail, on the default injection: the escape speed's 90%
//     interval holds the truth in 9, 10 and 9 of 10 seeds at halo x0.5,
//     1 and 2 (medians 1.055, 1.018 and 1.003 times the truth, from 23-96
//     stars), the tail's M200 likewise 9, 10 and 9 (medians 1.293, 1.072,
//     1.009: M200 moves as v_esc to the power 4-5); x0.5 and x2 ordered
//     10/10, 68% intervals disjoint 10/10; at x2 the interval lies above
//     the model's 512 km/s in 10/10, never at the top of its grid. On the
//     set with 500 per injected population it holds the escape speed in
//     7, 9 and 9 of 10: 500 disk runaways in 25,000 stars pass the halo
//     selection and lift the tail of the light halo. That is a known
//     limit of the selection (README), not judged here.
//   - orbits, on 500 per injected population (50-92 carrying stars of
//     110-151 candidates): the 90% intervals hold the truth in 9, 10 and 9
//     of 10 seeds (medians 1.249, 1.117 and 1.038 times the truth), x0.5
//     and x2 ordered 10/10, 68% intervals disjoint 10/10. On the default
//     injection (3-14 carrying stars of 7-20 candidates; 2-4 intervals per
//     mass span the whole grid) 10, 9 and 10 of 10, ordered 10/10 but
//     disjoint 1/10: a dozen candidates weigh the halo only loosely.
//   - logged, not judged, with STARVET_RECOVERY_EJECTEES=1: the default
//     injection with 500 ejectees alone (Config.Ejectees; the disk
//     runaways and traps at the default). The ejectees are drawn first
//     from each seed's stream, so they are the 500 of the set above,
//     observed with other noise. Tail: 8, 10 and 10 of 10 (medians
//     1.048, 0.975, 0.985). Orbits: 9, 9 and 10 of 10 (medians 0.814,
//     1.078, 0.937), ordered and disjoint 10/10.
//   - before (the score from each draw's full speed |v|, a box law of
//     700-1800 km/s and 10-250 Myr): orbits 9, 8 and 9 on the judged set
//     but 10, 9 and 7 on the logged one with medians 0.76, 0.59, 0.79 (|v|
//     is biased high by the noise across the line of sight), 7, 7 and 4
//     at the default injection. The velocity law with the box law failed
//     the judged set (9, 7 and 7: a precise star near the box's corner has
//     a likelihood with a cliff). README tells the whole story.
//
// The scenario's halo follows the Leonard & Tremaine law by construction,
// so for the velocity tail this test checks the machinery (radial scaling,
// errors, outlier term, selection, conversion to mass), not the functional
// form itself, whose bias in realistic simulated galaxies (masses low by
// up to ~20%, Grand et al. 2019, MNRAS 487, L72) is stated in README.
const (
	recoverySeeds    = 10
	recoveryStars    = 25000
	recoveryCoverage = 0.8
	// recoveryInjected is the stars per injected population (scenario's
	// Config.Injected; its default at 25,000 stars is 50, which leaves the
	// orbit method 7-25 candidate ejectees, fewer than a real search's
	// tens to hundreds): 500 gives 110-200 candidates (seeds 1-10 at the
	// three haloes), and ten times as many disk runaways and fast halo
	// stars too.
	recoveryInjected = 500
	// recoveryDefaultInjected: the scenario's own default (Stars/500, 50
	// at 25,000 stars), on which the velocity tail is judged: 500 disk
	// runaways in 25,000 stars (2 per cent) are far more than a halo
	// sample holds, and they bias the tail at half the halo mass (see
	// recoveryGated).
	recoveryDefaultInjected = 0
	// recoveryOrbitDraws: the orbit method back-traces 32 of each star's
	// 64 draws (Options.OrbitDraws; its cost grows with the draws), so
	// that the 30 scenarios stay within about 6 minutes on 2 cores.
	recoveryOrbitDraws = 32
)

var recoveryScales = []float64{0.5, 1, 2}

// recoveryRun is one scenario's estimates and truth.
type recoveryRun struct {
	seed  uint64
	truth *scenario.HaloTruth
	r     *Result
	model float64 // the campaign model's escape speed at the Sun, km/s
	// gridLo, gridHi: M200 at the orbit method's grid edges.
	gridLo, gridHi float64
}

func weighScenario(t *testing.T, cfg scenario.Config, orbitDraws int) recoveryRun {
	t.Helper()
	ctx := context.Background()
	start := time.Now()
	c, ledger, _ := vetScenario(t, cfg)
	vetted := time.Now()
	dir := filepath.Dir(ledger)
	l, err := db.Open(ctx, ledger, db.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	r, err := Weigh(ctx, l, c, Options{InfallOnly: true, OrbitDraws: orbitDraws, Workers: 2, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("halo x%.1f seed %d: vetted in %v, weighed in %v; %d orbit candidates", cfg.HaloScale, cfg.Seed,
		vetted.Sub(start).Round(100*time.Millisecond), time.Since(vetted).Round(100*time.Millisecond), r.OrbitCandidates)
	truth, err := scenario.LoadHaloTruth(dir)
	if err != nil {
		t.Fatal(err)
	}
	model, _, err := vetting.Model(c)
	if err != nil {
		t.Fatal(err)
	}
	vm := model.EscapeSpeed(weigh.SunPositionKpc(c.Galaxy.Sun()), c.Potential.EscapeRadiusKpc)
	edge := func(f float64) float64 {
		m, err := weigh.ScaleHalo(model, f)
		if err != nil {
			t.Fatal(err)
		}
		h, err := weigh.HaloOf(m)
		if err != nil {
			t.Fatal(err)
		}
		return h.M200Msun
	}
	return recoveryRun{seed: cfg.Seed, truth: truth, r: r, model: vm,
		gridLo: edge(weigh.DefaultOrbitScaleMin), gridHi: edge(weigh.DefaultOrbitScaleMax)}
}

// inside90: the estimate is carried by at least one star and its 90 per
// cent interval holds the truth. Estimate.Stars is the tail's sample (0:
// no fit) and, for the orbits, the stars whose ln L varies by more than 0.5
// over the halo grid: an orbit interval carried by none is the grid's
// flat likelihood, not a measurement, and does not count as a recovery
// (the bare containment is logged beside it).
func inside90(e Estimate, truth float64) bool {
	return e.Stars > 0 && bare90(e, truth)
}

func bare90(e Estimate, truth float64) bool { return e.Hi90 > 0 && e.Lo90 <= truth && truth <= e.Hi90 }

func TestWeighRecovery(t *testing.T) {
	if testing.Short() {
		t.Skip("vets and weighs 60 (or 90) scenarios")
	}
	// Two sets of scenarios: the scenario's default injection, on which
	// the velocity tail is judged, and recoveryInjected per injected
	// population, on which the orbit method is (it needs the ejectees).
	// With STARVET_RECOVERY_EJECTEES=1 a third: the default injection
	// with recoveryInjected ejectees alone (Config.Ejectees), logged only
	// (see the figures above; it adds about 3 minutes, which would take
	// the package past go test's default 10-minute limit on 2 cores).
	// Every method is logged on every set.
	type recoverySet struct {
		name               string
		injected, ejectees int
	}
	sets := []recoverySet{
		{"default injection", recoveryDefaultInjected, 0},
		{fmt.Sprintf("%d per injected population", recoveryInjected), recoveryInjected, 0},
	}
	if os.Getenv("STARVET_RECOVERY_EJECTEES") == "1" {
		sets = append(sets, recoverySet{fmt.Sprintf("default injection, %d ejectees", recoveryInjected), recoveryDefaultInjected, recoveryInjected})
	} else {
		t.Log("STARVET_RECOVERY_EJECTEES=1 adds the logged set with 500 ejectees alone")
	}
	runsOf := make([]map[float64][]recoveryRun, len(sets))
	for k, set := range sets {
		runsOf[k] = map[float64][]recoveryRun{}
		for _, hs := range recoveryScales {
			for seed := uint64(1); seed <= recoverySeeds; seed++ {
				runsOf[k][hs] = append(runsOf[k][hs], weighScenario(t, scenario.Config{Seed: seed, Stars: recoveryStars, Injected: set.injected, Ejectees: set.ejectees, HaloScale: hs}, recoveryOrbitDraws))
			}
		}
	}
	type method struct {
		name  string
		est   func(*Result) Estimate
		truth func(*scenario.HaloTruth) float64
		f     string
		set   int // the scenarios the method's targets are judged on
	}
	methods := []method{
		{"escape speed (tail)", func(r *Result) Estimate { return r.EscapeSpeedKms }, func(h *scenario.HaloTruth) float64 { return h.VEscSunInfKms }, "%.0f", 0},
		{"M200 (tail)", func(r *Result) Estimate { return r.HaloMassTailMsun }, func(h *scenario.HaloTruth) float64 { return h.M200RelationMsun }, "%.3g", 0},
		{"M200 (orbits)", func(r *Result) Estimate { return r.HaloMassOrbitsMsun }, func(h *scenario.HaloTruth) float64 { return h.M200Msun }, "%.3g", 1},
	}
	// Coverage per scale and method, on the method's own set.
	coverage := map[string]map[float64]float64{}
	for _, m := range methods {
		coverage[m.name] = map[float64]float64{}
	}
	for _, m := range methods {
		for k, set := range sets {
			runs := runsOf[k]
			for _, hs := range recoveryScales {
				in, bare, stars, whole := 0, 0, []int{}, 0
				var lines []string
				var ratios []float64
				for _, rr := range runs[hs] {
					e, tv := m.est(rr.r), m.truth(rr.truth)
					if inside90(e, tv) {
						in++
					}
					if bare90(e, tv) {
						bare++
					}
					stars = append(stars, e.Stars)
					if m.name == "M200 (orbits)" && e.Hi90 > 0 && e.Lo90 <= rr.gridLo*(1+1e-9) && e.Hi90 >= rr.gridHi*(1-1e-9) {
						whole++
					}
					if e.Stars > 0 {
						ratios = append(ratios, e.Median/tv)
					}
					lines = append(lines, fmt.Sprintf("seed %d: "+m.f+" ["+m.f+", "+m.f+"] (%d stars)", rr.seed, e.Median, e.Lo90, e.Hi90, e.Stars))
				}
				cov := float64(in) / float64(len(runs[hs]))
				if k == m.set {
					coverage[m.name][hs] = cov
				}
				sort.Float64s(ratios)
				med := 0.0
				if len(ratios) > 0 {
					med = ratios[len(ratios)/2]
				}
				t.Logf("[%s] %s, halo x%.1f (truth "+m.f+"): 90%% interval holds the truth in %d/%d seeds (%.0f%%); (holds it regardless of the stars carrying it: %d/%d); median estimate/truth %.3f; stars %v; intervals spanning the whole orbit grid %d\n    %s",
					set.name, m.name, hs, m.truth(runs[hs][0].truth), in, len(runs[hs]), 100*cov, bare, len(runs[hs]), med, stars, whole, strings.Join(lines, "\n    "))
			}
		}
	}
	// Lightest and heaviest told apart, seed by seed: the medians ordered,
	// and the 68 per cent intervals disjoint.
	lo, hi := recoveryScales[0], recoveryScales[len(recoveryScales)-1]
	apart := map[string][2]int{}
	for _, m := range methods {
		for k, set := range sets {
			runs := runsOf[k]
			ordered, disjoint := 0, 0
			for j := range runs[lo] {
				a, b := m.est(runs[lo][j].r), m.est(runs[hi][j].r)
				if a.Stars > 0 && b.Stars > 0 && a.Median < b.Median {
					ordered++
				}
				if a.Stars > 0 && b.Stars > 0 && a.Hi68 < b.Lo68 {
					disjoint++
				}
			}
			if k == m.set {
				apart[m.name] = [2]int{ordered, disjoint}
			}
			t.Logf("[%s] %s: halo x%.1f vs x%.1f: medians ordered in %d/%d seeds, 68%% intervals disjoint in %d/%d", set.name, m.name, lo, hi, ordered, recoverySeeds, disjoint, recoverySeeds)
		}
	}
	// (f) the heavier halo's own escape speed, not the model's: how often
	// the 90 per cent interval lies wholly above the campaign model's.
	// On the tail's own set.
	runs := runsOf[methods[0].set]
	above, atTop := 0, 0
	for _, rr := range runs[2] {
		if rr.r.EscapeSpeedKms.Lo90 > rr.model {
			above++
		}
		for _, n := range rr.r.Notes {
			if strings.Contains(n, "top of its grid") {
				atTop++
			}
		}
	}
	t.Logf("halo x2: escape-speed 90%% interval wholly above the campaign model's %.0f km/s in %d/%d seeds; posterior reaching the top of its grid in %d/%d",
		runs[2][0].model, above, recoverySeeds, atTop, recoverySeeds)

	// The targets.
	if float64(above) < recoveryCoverage*recoverySeeds {
		t.Errorf("halo x2: the escape-speed 90%% interval lies wholly above the campaign model's in only %d/%d seeds", above, recoverySeeds)
	}
	if atTop != 0 {
		t.Errorf("halo x2: the escape-speed posterior reaches the top of its grid in %d/%d seeds", atTop, recoverySeeds)
	}
	for _, m := range methods {
		for _, hs := range recoveryScales {
			cov := coverage[m.name][hs]
			if cov < recoveryCoverage {
				t.Errorf("%s, halo x%.1f: coverage %.0f%%, target >= %.0f%%", m.name, hs, 100*cov, 100*recoveryCoverage)
			}
		}
		a := apart[m.name]
		if a[0] != recoverySeeds || float64(a[1]) < recoveryCoverage*recoverySeeds {
			t.Errorf("%s: lightest and heaviest not told apart: medians ordered in %d/%d seeds (target all), 68%% intervals disjoint in %d/%d (target >= %.0f%%)",
				m.name, a[0], recoverySeeds, a[1], recoverySeeds, 100*recoveryCoverage)
		}
	}
}
