package report

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/potential"
	"starvet/internal/units"
)

func TestHammerAitoff(t *testing.T) {
	const deg = units.RadPerDeg
	// Analytic identities of the projection formula (x = 2 sqrt2 cos b
	// sin(l/2)/D, y = sqrt2 sin b/D, D = sqrt(1 + cos b cos(l/2))).
	cases := []struct {
		name         string
		lDeg, bDeg   float64
		wantX, wantY float64
	}{
		{"centre", 0, 0, 0, 0},
		{"edge l=180", 180, 0, 2 * math.Sqrt2, 0},
		{"north pole", 0, 90, 0, math.Sqrt2},
		{"south pole", 0, -90, 0, -math.Sqrt2},
		{"pole at any l", 123, 90, 0, math.Sqrt2},
		// l = 90, b = 0: D = sqrt(1 + 1/sqrt2), x = 2 sqrt2 (1/sqrt2)/D = 2/D.
		{"l=90 on the equator", 90, 0, 2 / math.Sqrt(1+1/math.Sqrt2), 0},
		{"l=-90 mirrors l=90", -90, 0, -2 / math.Sqrt(1+1/math.Sqrt2), 0},
		// l = 0: D = sqrt(1 + cos b); b = 60: y = sqrt2 (sqrt3/2)/sqrt(3/2) = 1.
		{"central meridian b=60", 0, 60, 0, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x, y := HammerAitoff(c.lDeg*deg, c.bDeg*deg)
			if math.Abs(x-c.wantX) > 1e-12 || math.Abs(y-c.wantY) > 1e-12 {
				t.Errorf("HammerAitoff(%g, %g) = (%.15g, %.15g), want (%.15g, %.15g)", c.lDeg, c.bDeg, x, y, c.wantX, c.wantY)
			}
		})
	}
	// Equal area (analytic identity): the Jacobian |d(x,y)/d(l,b)| equals
	// the sphere's area element cos b everywhere; checked by central
	// differences.
	for _, p := range [][2]float64{{10, 20}, {-150, -70}, {95, 45}, {170, 5}, {-30, -10}} {
		t.Run("area element", func(t *testing.T) {
			l, b, h := p[0]*deg, p[1]*deg, 1e-6
			x1, y1 := HammerAitoff(l+h, b)
			x0, y0 := HammerAitoff(l-h, b)
			x3, y3 := HammerAitoff(l, b+h)
			x2, y2 := HammerAitoff(l, b-h)
			j := math.Abs((x1-x0)/(2*h)*(y3-y2)/(2*h) - (y1-y0)/(2*h)*(x3-x2)/(2*h))
			if math.Abs(j-math.Cos(b)) > 1e-7 {
				t.Errorf("at l=%g b=%g: Jacobian %.10g, want cos b = %.10g", p[0], p[1], j, math.Cos(b))
			}
		})
	}
}

func TestWrapLon(t *testing.T) {
	cases := []struct{ in, want float64 }{
		{0, 0}, {math.Pi, math.Pi}, {-math.Pi, math.Pi}, {1.5 * math.Pi, -0.5 * math.Pi},
		{2 * math.Pi, 0}, {-0.25 * math.Pi, -0.25 * math.Pi}, {5 * math.Pi, math.Pi},
	}
	for _, c := range cases {
		if got := wrapLon(c.in); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("wrapLon(%g) = %g, want %g", c.in, got, c.want)
		}
	}
}

// markers counts the paths vgsvg wrote with exactly this opaque fill:
// a filled glyph, a legend thumbnail or a histogram bar segment.
func markers(svg []byte, status string) int {
	re := regexp.MustCompile(`<path d="[^"]*" style="fill:` + hexColor(styleOf(status).Color) + `" />`)
	return len(re.FindAll(svg, -1))
}

func writeFixture(t *testing.T, f *fakeSource, runID int64, opt Options) (string, *Summary) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "out")
	sum, err := Write(context.Background(), f, runID, dir, opt)
	if err != nil {
		t.Fatalf("Write: %v", err)
	}
	return dir, sum
}

func readFile(t *testing.T, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func TestPlotMarkerCounts(t *testing.T) {
	model := potential.DefaultModel
	dir, sum := writeFixture(t, fixture(model), 0, Options{})
	if sum.RunID != 2 {
		t.Fatalf("run %d reported, want the latest complete run 2", sum.RunID)
	}
	// Expected counts follow from the fixture (see its comment); +1 per
	// status for its legend thumbnail, 0 when the status is absent.
	cases := []struct {
		file    string
		want    map[string]int // markers drawn per status, legend excluded
		omitted int
	}{
		{"speed.svg", map[string]int{"bound": 4, "marginal": 2, "unbound": 3}, 2},
		{"sky.svg", map[string]int{"bound": 4, "marginal": 2, "unbound": 3, "needs-rv": 1, "rejected": 5}, 2},
		// bar segments: bound bins 0 and 2, marginal 11 and 12, unbound 19
		{"p_unbound.svg", map[string]int{"bound": 2, "marginal": 2, "unbound": 1}, 1},
		{"crossings.svg", map[string]int{"unbound": 6, "marginal": 1}, 1},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			svg := readFile(t, filepath.Join(dir, c.file))
			for _, st := range tableOrder {
				want := c.want[st]
				if want > 0 {
					want++
				}
				if got := markers(svg, st); got != want {
					t.Errorf("%s: %d %s paths (markers + legend), want %d", c.file, got, st, want)
				}
			}
			var ps *PlotSummary
			for i := range sum.Plots {
				if sum.Plots[i].File == c.file {
					ps = &sum.Plots[i]
				}
			}
			if ps == nil {
				t.Fatalf("no summary for %s", c.file)
			}
			for st, n := range c.want {
				if ps.Points[st] != n {
					t.Errorf("summary %s: %d %s points, want %d", c.file, ps.Points[st], st, n)
				}
			}
			if ps.Omitted != c.omitted {
				t.Errorf("summary %s: %d omitted, want %d", c.file, ps.Omitted, c.omitted)
			}
		})
	}
	if !sum.Plots[0].HasCurve || sum.Plots[0].Extra != 0 {
		t.Errorf("built-in model: curve %v, per-star markers %d; want curve and none", sum.Plots[0].HasCurve, sum.Plots[0].Extra)
	}
}

// rings counts stroked black circles (draw.RingGlyph) in an SVG.
func rings(svg []byte) int {
	re := regexp.MustCompile(`<path d="M[^"]*A[^"]*" style="fill:none;stroke:#000000;stroke-width:0.5" />`)
	return len(re.FindAll(svg, -1))
}

func TestComponentsModelDrawsEachEscapeSpeed(t *testing.T) {
	dir, sum := writeFixture(t, fixture(campaign.ComponentsModel), 2, Options{})
	svg := readFile(t, filepath.Join(dir, "speed.svg"))
	// 9 stars with a speed, each with a stored v_esc, plus one legend ring.
	if got := rings(svg); got != 10 {
		t.Errorf("%d escape-speed rings, want 9 + 1 legend", got)
	}
	if sum.Plots[0].HasCurve || sum.Plots[0].Extra != 9 {
		t.Errorf("curve %v, per-star markers %d; want no curve and 9", sum.Plots[0].HasCurve, sum.Plots[0].Extra)
	}
	page := string(readFile(t, sum.Index))
	if !strings.Contains(page, "cannot be rebuilt from the ledger") {
		t.Error("page does not say that the model cannot be rebuilt")
	}
	// With the built-in model there are no such rings.
	dir2, _ := writeFixture(t, fixture(potential.DefaultModel), 2, Options{})
	if got := rings(readFile(t, filepath.Join(dir2, "speed.svg"))); got != 0 {
		t.Errorf("built-in model: %d rings, want 0", got)
	}
}

func TestPageContent(t *testing.T) {
	_, sum := writeFixture(t, fixture(potential.DefaultModel), 2, Options{})
	page := string(readFile(t, sum.Index))
	if sum.Candidates != 5 {
		t.Errorf("%d candidates, want 5", sum.Candidates)
	}
	// Candidate rows in p_unbound order; ties by speed; U3 carried (*).
	re := regexp.MustCompile(`<tr class="candidate"><td>([^<]*)</td>`)
	var ids []string
	for _, m := range re.FindAllStringSubmatch(page, -1) {
		ids = append(ids, m[1])
	}
	if got, want := strings.Join(ids, ","), "U1,U2,U3*,M1,M2"; got != want {
		t.Errorf("candidate rows %s, want %s", got, want)
	}
	for _, want := range []string{
		// U1: speed 1000 (900-1100), r 50.0, v_esc 380, p 0.99, no lower bound, origin, gc 0.8, 55.0 Myr, inverse
		`<td class="n">1000</td><td class="n">900–1100</td><td class="n">50.0</td><td class="n">380</td><td class="n">0.99</td><td class="n">-</td><td>galactic-centre</td><td class="n">0.8</td><td class="n">55.0</td><td>inverse</td>`,
		`<td>plx-signif</td><td class="n">3</td><td>R1: parallax_significance 2.1 &lt; 5</td>`,
		`<td>noise</td><td class="n">2</td><td>R1: excess 3 &gt; 2</td>`,
		`1 rejected star(s) have no stored reasons`,
		`<td>unbound</td><td><span class="sw" style="background: #D55E00"></span>vermillion triangle</td><td class="n">3</td>`,
		`<td>withdrawn</td>`,
		`<td class="n">17</td>`,
		`<td>qelvar</td><td>Q3</td><td>astrometry</td><td class="n">2019.5</td><td>qelvar_q3.csv</td><td class="n">20</td><td class="n">18</td><td class="n">2</td>`,
		`not a discovery`,
		`2026-11-30 11:00:00 UTC`,
		potential.DefaultModel,
		`1 kpc (default; not recorded in the ledger)`,
		`<img src="speed.svg"`, `<img src="sky.svg"`, `<img src="p_unbound.svg"`, `<img src="crossings.svg"`,
	} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	if strings.Contains(page, "http://") || strings.Contains(page, "https://") {
		t.Error("page refers to the network")
	}
	_, sum2 := writeFixture(t, fixture(potential.DefaultModel), 2, Options{GCRadiusKpc: 0.5, EscapeRadiusKpc: 200})
	page2 := string(readFile(t, sum2.Index))
	for _, want := range []string{"0.5 kpc (given in the options)", "escape to r = 200 kpc"} {
		if !strings.Contains(page2, want) {
			t.Errorf("page with options lacks %q", want)
		}
	}
}

func TestDeterministic(t *testing.T) {
	d1, s1 := writeFixture(t, fixture(potential.DefaultModel), 2, Options{})
	d2, _ := writeFixture(t, fixture(potential.DefaultModel), 2, Options{})
	for _, p := range s1.Files {
		name := filepath.Base(p)
		if !bytes.Equal(readFile(t, filepath.Join(d1, name)), readFile(t, filepath.Join(d2, name))) {
			t.Errorf("%s differs between two writes of the same ledger", name)
		}
	}
	if len(s1.Files) != 5 {
		t.Errorf("%d files, want index.html and 4 plots", len(s1.Files))
	}
}

func TestErrors(t *testing.T) {
	ctx := context.Background()
	cases := []struct {
		name    string
		src     *fakeSource
		run     int64
		is      error
		mention string
	}{
		{"no such run", fixture("x"), 9, db.ErrNoRun, "no run 9"},
		{"no complete run", &fakeSource{}, 0, ErrNoRun, "no complete run"},
		{"reasons fail", func() *fakeSource { f := fixture("x"); f.failOn = "Reasons"; return f }(), 2, errBoom, `star "R1"`},
		{"crossings fail", func() *fakeSource { f := fixture("x"); f.failOn = "Crossings"; return f }(), 2, errBoom, "fake source failure"},
		{"run fails", func() *fakeSource { f := fixture("x"); f.failOn = "Run"; return f }(), 2, errBoom, "fake source failure"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			_, err := Write(ctx, c.src, c.run, dir, Options{})
			if !errors.Is(err, c.is) {
				t.Fatalf("error %v, want one wrapping %v", err, c.is)
			}
			if !strings.Contains(err.Error(), c.mention) {
				t.Errorf("error %q does not mention %q", err, c.mention)
			}
			if _, err := os.Stat(filepath.Join(dir, "index.html")); err == nil {
				t.Error("index.html written despite the error")
			}
		})
	}
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := Write(cctx, fixture("x"), 2, t.TempDir(), Options{}); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled context: error %v, want context.Canceled", err)
	}
}

func TestNoPositionsNoCrossings(t *testing.T) {
	// A ledger without positions or crossings (e.g. a run from before the
	// crossings table) still gives a page that says what is missing.
	f := fixture(potential.DefaultModel)
	f.positions, f.crossings = nil, nil
	dir, s := writeFixture(t, f, 2, Options{})
	page := string(readFile(t, s.Index))
	for _, want := range []string{"Not drawn: 17 star(s) without a stored position", "holds no crossings for the stars of this run"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	for _, f := range []string{"sky.svg", "crossings.svg"} {
		svg := readFile(t, filepath.Join(dir, f))
		for _, st := range tableOrder {
			if n := markers(svg, st); n != 0 {
				t.Errorf("%s: %d %s markers without data, want 0", f, n, st)
			}
		}
	}
}

func TestLinearTicks(t *testing.T) {
	cases := []struct {
		lo, hi float64
		want   string // labelled values
	}{
		{0, 1300, "0,200,400,600,800,1000,1200"},
		{0, 2912.3, "0,500,1000,1500,2000,2500"},
		{0, 130, "0,20,40,60,80,100,120"},
		{0, 0.9, "0.0,0.2,0.4,0.6,0.8"},
	}
	for _, c := range cases {
		t.Run(fmt.Sprint(c.hi), func(t *testing.T) {
			var got []string
			for _, tk := range (linearTicks{}).Ticks(c.lo, c.hi) {
				if tk.Label != "" {
					got = append(got, tk.Label)
				}
			}
			if strings.Join(got, ",") != c.want {
				t.Errorf("labels %v, want %s", got, c.want)
			}
		})
	}
	if ts := (linearTicks{}).Ticks(5, 5); ts != nil {
		t.Errorf("empty range gave %d ticks", len(ts))
	}
}

// A run that recorded its settings is drawn with the ledger's escape
// radius, centre radius and Solar distance, without options and even
// against them, and the page says where they come from; it also states
// the recorded verdict thresholds and what the run computed.
func TestReportUsesRecordedSettings(t *testing.T) {
	f := fixture(potential.DefaultModel)
	f.settings = map[int64]*db.RunSettings{2: {Values: []db.Setting{
		db.FloatSetting(campaign.SettingEscapeRadiusKpc, 187.5),
		db.FloatSetting(campaign.SettingGCRadiusKpc, 0.75),
		db.FloatSetting(campaign.SettingSunDistanceKpc, 8.3),
		db.FloatSetting(campaign.SettingUnboundP, 0.85),
		db.FloatSetting(campaign.SettingMarginalP, 0.55),
	}}}
	for _, opt := range []Options{{}, {EscapeRadiusKpc: 50, GCRadiusKpc: 2, SunDistanceKpc: 7, SettingsSource: "from a campaign"}} {
		_, sum := writeFixture(t, f, 2, opt)
		page := string(readFile(t, sum.Index))
		for _, want := range []string{
			"escape to r = 187.5 kpc (recorded in the ledger for run 2)",
			"0.75 kpc (recorded in the ledger for run 2)",
			"8.3 kpc (recorded in the ledger for run 2)",
			"unbound at p_unbound ≥ 0.85, marginal at p_unbound ≥ 0.55 (recorded in the ledger for run 2)",
			"2 (complete, incremental: 16 computed, 1 carried)",
			"not a discovery",
		} {
			if !strings.Contains(page, want) {
				t.Errorf("options %+v: page lacks %q", opt, want)
			}
		}
		if strings.Contains(page, "not recorded") {
			t.Errorf("options %+v: page says a recorded setting is not recorded", opt)
		}
		if got := sum.Plots[0].Note; !strings.Contains(got, "(escape to r = 187.5 kpc along the same ray)") {
			t.Errorf("options %+v: speed plot drawn with another escape radius: %s", opt, got)
		}
		if got := sum.Plots[3].Note; !strings.Contains(got, "centre radius, 0.75 kpc") || !strings.Contains(got, "Sun at x = -8.3 kpc") {
			t.Errorf("options %+v: crossing plot: %s", opt, got)
		}
	}
	// Run 1 recorded nothing: as before, the page says so.
	_, sum := writeFixture(t, f, 1, Options{})
	page := string(readFile(t, sum.Index))
	for _, want := range []string{"the campaign default; this run&#39;s setting is not recorded in the ledger", "Verdict thresholds</dt><dd>not recorded in the ledger for this run",
		"1 (complete, every star computed)"} {
		if !strings.Contains(page, want) {
			t.Errorf("run 1: page lacks %q", want)
		}
	}
}

// A candidate with missing values reads numfmt.Missing in every such cell;
// a speed range with one end missing is no range.
func TestCandidateMissingCells(t *testing.T) {
	nan := math.NaN()
	v := db.VerdictRow{StarID: "X1", Status: "marginal", SpeedP16Kms: nan, SpeedP50Kms: 512.6, SpeedP84Kms: 601.2,
		RGCKpc: nan, VEscKms: 498.49, PUnbound: 0.6123, PUnboundLower: nan, GCConsistency: nan, FlightTimeMyr: nan,
		PGCOrigin: nan, SpeedLowerP50Kms: nan}
	got := candidates(&data{stars: []star{{VerdictRow: v}}})
	if len(got) != 1 {
		t.Fatalf("%d candidates, want 1", len(got))
	}
	want := candRow{StarID: "X1", Status: "marginal", Color: got[0].Color, Speed: "513", Range: "-", RGC: "-", VEsc: "498",
		PUnbound: "0.612", PUnboundL: "-", Origin: "-", GCCons: "-", Flight: "-", DistMethod: "-"}
	if got[0] != want {
		t.Errorf("candidates = %+v,\nwant %+v", got, want)
	}
}
