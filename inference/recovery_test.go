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
// Measured 2026-12-04 (go test ./inference -run TestWeighRecovery -v, 302 s
// on 2 cores for the first two sets; with STARVET_RECOVERY_EJECTEES=1, 479 s
// for the three; every scenario is seeded, so the figures are
// reproducible):
//   - velocity tail, on the default injection: the escape speed's 90%
//     interval holds the truth in 10, 10 and 10 of 10 seeds at halo x0.5,
//     1 and 2 (medians 1.039, 0.991 and 0.998 times the truth, from 23-42,
//     44-68 and 63-91 stars), the tail's M200 likewise 10, 10 and 10
//     (medians 1.204, 0.962, 0.992: M200 moves as v_esc to the power 4-5);
//     x0.5 and x2 ordered 10/10, 68% intervals disjoint 10/10; at x2 the
//     interval lies above the model's 512 km/s in 10/10, never at the top
//     of its grid. On the set with 500 per injected population it holds
//     the escape speed in only 4, 8 and 8 of 10 (median 1.09 times the
//     truth at x0.5): 500 disk runaways in 25,000 stars pass the halo
//     selection and lift the tail of the light halo. That is a known
//     limit of the selection (README), not judged here.
//   - orbits, on 500 per injected population (2-21 carrying stars of
//     140-200 candidates): the 90% intervals hold the truth in 9, 8 and 9
//     of 10 seeds (medians 0.974, 0.971 and 0.905 times the truth), x0.5
//     and x2 ordered 10/10, 68% intervals disjoint 10/10. At x1 that is
//     the target exactly. On the default injection (0-4 carrying stars of
//     10-25 candidates; 5-7 intervals span the whole grid) it holds the
//     truth in only 7, 7 and 4 of 10, ordered 5/10, disjoint 0/10: a dozen
//     candidates do not weigh the halo under this ejection model.
//   - logged, not judged, with STARVET_RECOVERY_EJECTEES=1: the default
//     injection with 500 ejectees alone (Config.Ejectees; the disk
//     runaways and traps at the default). The
//     ejectees are drawn first from each seed's stream, so they are the
//     500 of the set above, observed with other noise. Tail: 8, 9 and 10
//     of 10 (medians 1.034, 0.993, 0.996; the tail's M200 likewise).
//     Orbits: 10, 9 and 7 of 10, medians 0.758, 0.594 and 0.789 times the
//     truth (4-16 carrying stars of about 150 candidates): under the other
//     noise the orbit method misses its target at x2 and runs low at
//     every mass. Diagnosed on seeds 1-4 (2026-12-04, not fixed): the
//     carrying stars are the fastest ejectees, and the draws' full speed
//     |v| carries the tangential noise in quadrature (a distant star's
//     proper-motion error is 100+ km/s across the line of sight), which
//     puts their launch speeds past the ejection law's 1800 km/s edge
//     under the true halo, so lighter haloes fit them better. Using the
//     draws' radial velocity instead gave 10, 9 and 8 (medians 1.16,
//     0.88, 0.88) but let the runaway of weigh's TestRunawayAmongEjectees
//     swing ln L by 0.91 instead of 0.07 and move the maximum by two grid
//     steps; |v|^2 less the tangential noise variance kept the runaway
//     at 0.07 but held x2 in only 6 of 10 (median 0.79); conditioning
//     each star's draws (as a Gaussian) on a tangential velocity of zero
//     within 10 km/s per axis centred the medians (1.34, 1.04, 1.00) but
//     held the truth in 7, 7 and 8 of 10 on this set and on the judged
//     one (intervals too narrow). None is kept; README states the limit.
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
	// orbit method 10-25 candidate ejectees, fewer than a real search's
	// tens to hundreds): 500 gives 140-200 candidates (seeds 1-10 at the
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
