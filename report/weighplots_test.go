package report

import (
	"bytes"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"starvet/db"
	"starvet/galaxy/potential"
)

// weighFixture is a weighing of known curves: a tail sample of 5 speeds,
// a posterior on an escape-speed grid of 301-1199 km/s peaked at 520 km/s
// (dispersion 60 km/s, so above 1e-2 of the peak on 340-699) and empty
// below 340 and above 700, and an orbit likelihood on 5 halo masses.
func weighFixture() *db.Inference {
	cv := &db.InferenceCurves{VMinKms: 300, KMedian: 3, TailSpeedsKms: []float64{320, 350, 410, 455, 490}}
	for v := 301.0; v < 1200; v += 2 {
		p := 0.0
		if v >= 340 && v < 700 {
			p = math.Exp(-0.5 * math.Pow((v-520)/60, 2))
		}
		cv.VEscGridKms = append(cv.VEscGridKms, v)
		cv.VEscPosterior = append(cv.VEscPosterior, p)
		cv.M200GridMsun = append(cv.M200GridMsun, 1e12*math.Pow(v/520, 4.5))
	}
	for i, m := range []float64{2e11, 4e11, 8e11, 1.6e12, 3.2e12} {
		cv.OrbitM200Msun = append(cv.OrbitM200Msun, m)
		cv.OrbitLogLike = append(cv.OrbitLogLike, -0.5*float64((i-2)*(i-2)))
	}
	return &db.Inference{ID: 1, RunID: 2, ToolVersion: "test", Curves: cv, Results: []db.InferenceResult{
		{Method: "velocity-tail", Parameter: "escape_speed_kms", Median: 520, Lo68: 460, Hi68: 580, Lo90: 421, Hi90: 619, Stars: 5},
		{Method: "ejectee-orbits", Parameter: "halo_mass_msun", Median: 8e11, Lo68: 4e11, Hi68: 1.6e12, Lo90: 2e11, Hi90: 3.2e12, Stars: 2},
	}}
}

// TestWeighingPlots: a weighed run gets the four weighing plots, each with
// the truth marked once when a truth is given and never without one; the
// escape-speed posterior is drawn from its first to its last non-empty
// node outside the 90 per cent interval (nodes 341-699, 180 of them); and
// the page holds the results table.
func TestWeighingPlots(t *testing.T) {
	files := []string{"weigh_tail.svg", "weigh_vesc.svg", "weigh_posterior.svg", "weigh_orbits.svg"}
	for _, truth := range []*HaloTruth{nil, {VEscKms: 512, M200TailMsun: 8.1e11, M200Msun: 7.1e11}} {
		f := fixture(potential.DefaultModel)
		f.inference = weighFixture()
		dir, sum := writeFixture(t, f, 0, Options{Truth: truth})
		byFile := map[string]PlotSummary{}
		for _, ps := range sum.Plots {
			byFile[ps.File] = ps
		}
		for _, file := range files {
			ps, ok := byFile[file]
			if !ok {
				t.Fatalf("truth %v: no %s written", truth != nil, file)
			}
			svg := readFile(t, filepath.Join(dir, file))
			want := 0
			if truth != nil {
				want = 1
			}
			if ps.Extra != want || bytes.Contains(svg, []byte("truth (invented scenario)")) != (want == 1) {
				t.Errorf("truth %v: %s marks the truth %d times (legend: %v), want %d", truth != nil, file, ps.Extra, bytes.Contains(svg, []byte("truth (invented")), want)
			}
		}
		if n := byFile["weigh_vesc.svg"].Points["grid nodes"]; n != 180 {
			t.Errorf("escape-speed posterior drawn on %d nodes, want 180", n)
		}
		if note := byFile["weigh_vesc.svg"].Note; !strings.Contains(note, "[421, 619]") {
			t.Errorf("escape-speed note %q lacks the 90%% interval", note)
		}
		page := string(readFile(t, filepath.Join(dir, "index.html")))
		for _, s := range []string{"Weighing the Galaxy", "escape_speed_kms", "weigh_vesc.svg", "180 grid nodes"} {
			if !strings.Contains(page, s) {
				t.Errorf("page lacks %q", s)
			}
		}
	}
}
