package report

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// The weighing plots (starvet weigh): drawn only when the run was
// weighed, from the curves the inference stored.

var (
	fitBlue    = curveGrey
	truthColor = color.RGBA{0xC0, 0x30, 0x30, 0xFF}
	truthMark  = []vg.Length{vg.Points(6), vg.Points(3)}
)

// result is the stored result of method and parameter, or nil.
func (d *data) result(method, parameter string) *struct{ Median, Lo90, Hi90 float64 } {
	for _, r := range d.inference.Results {
		if r.Method == method && r.Parameter == parameter {
			return &struct{ Median, Lo90, Hi90 float64 }{r.Median, r.Lo90, r.Hi90}
		}
	}
	return nil
}

// tailPlot: the tail sample's median speeds as a histogram, with the
// fitted tail (Leonard & Tremaine 1990, ApJ 353, 486) at the median
// escape speed and slope, scaled to the sample, and the escape speed.
func tailPlot(d *data) (*PlotSummary, []byte, error) {
	cv := d.inference.Curves
	ps := &PlotSummary{File: "weigh_tail.svg", Title: "The velocity tail and its fit", Points: map[string]int{}}
	p := newPlot(ps.Title, "median Galactocentric speed (km/s)", "stars per bin")
	r := d.result("velocity-tail", "escape_speed_kms")
	if len(cv.TailSpeedsKms) == 0 || r == nil {
		ps.Note = "no star entered the velocity-tail fit"
		svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
		return ps, svg, err
	}
	const bins = 20
	lo, hi := cv.VMinKms, math.Max(r.Hi90, slicesMax(cv.TailSpeedsKms))*1.05
	width := (hi - lo) / bins
	counts := make([]float64, bins)
	for _, v := range cv.TailSpeedsKms {
		if k := int((v - lo) / width); k >= 0 && k < bins {
			counts[k]++
		}
	}
	hist := make(plotter.XYs, 0, 2*bins)
	top := 0.0
	for k, n := range counts {
		x0 := lo + float64(k)*width
		hist = append(hist, plotter.XY{X: x0, Y: n}, plotter.XY{X: x0 + width, Y: n})
		top = math.Max(top, n)
	}
	if _, err := line(p, hist, black, vg.Points(1)); err != nil {
		return ps, nil, err
	}
	ps.Points["tail sample"] = len(cv.TailSpeedsKms)
	// The fitted density at the Sun, as counts per bin.
	k, ve, n := cv.KMedian, r.Median, float64(len(cv.TailSpeedsKms))
	var fit plotter.XYs
	for i := 0; i <= 200; i++ {
		v := lo + (hi-lo)*float64(i)/200
		f := 0.0
		if v < ve {
			f = (k + 1) * math.Pow(ve-v, k) / math.Pow(ve-lo, k+1)
		}
		fit = append(fit, plotter.XY{X: v, Y: f * n * width})
		top = math.Max(top, f*n*width)
	}
	if l, err := line(p, fit, fitBlue, vg.Points(1.5)); err != nil {
		return ps, nil, err
	} else {
		p.Legend.Add(fmt.Sprintf("fit: k = %.2g, v_esc = %.0f km/s", k, ve), l)
	}
	if l, err := line(p, plotter.XYs{{X: ve, Y: 0}, {X: ve, Y: top}}, fitBlue, vg.Points(1), vg.Points(2), vg.Points(2)); err != nil {
		return ps, nil, err
	} else {
		p.Legend.Add("escape speed (median)", l)
	}
	if err := markTruth(p, d, func(t *HaloTruth) float64 { return t.VEscKms }, top, ps); err != nil {
		return ps, nil, err
	}
	ps.Note = fmt.Sprintf("%d stars; the fit is drawn at the Sun's radius (each star was compared at its own escape speed)", len(cv.TailSpeedsKms))
	svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
	return ps, svg, err
}

// escapePosteriorPlot: the posterior of the escape speed at the Sun on
// its grid, with the 90 per cent interval's ends.
func escapePosteriorPlot(d *data) (*PlotSummary, []byte, error) {
	cv := d.inference.Curves
	ps := &PlotSummary{File: "weigh_vesc.svg", Title: "Posterior of the escape speed at the Sun (velocity tail)", Points: map[string]int{}}
	p := newPlot(ps.Title, "escape speed at the Sun (km/s)", "posterior weight per grid node")
	r := d.result("velocity-tail", "escape_speed_kms")
	if len(cv.VEscGridKms) < 2 || len(cv.VEscPosterior) != len(cv.VEscGridKms) || r == nil {
		ps.Note = "no posterior to draw"
		svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
		return ps, svg, err
	}
	xys := make(plotter.XYs, len(cv.VEscGridKms))
	top := 0.0
	for i, v := range cv.VEscGridKms {
		xys[i] = plotter.XY{X: v, Y: cv.VEscPosterior[i]}
		top = math.Max(top, cv.VEscPosterior[i])
	}
	// Trim the grid's empty ends so the peak is readable.
	first, last := 0, len(xys)-1
	for first < last-1 && xys[first].Y < 1e-4*top && xys[first].X < r.Lo90 {
		first++
	}
	for last > first+1 && xys[last].Y < 1e-4*top && xys[last].X > r.Hi90 {
		last--
	}
	xys = xys[first : last+1]
	ps.Points["grid nodes"] = len(xys)
	if l, err := line(p, xys, black, vg.Points(1.5)); err != nil {
		return ps, nil, err
	} else {
		p.Legend.Add("posterior", l)
	}
	for i, x := range []float64{r.Lo90, r.Hi90} {
		l, err := line(p, plotter.XYs{{X: x, Y: 0}, {X: x, Y: top}}, fitBlue, vg.Points(1), vg.Points(2), vg.Points(2))
		if err != nil {
			return ps, nil, err
		}
		if i == 0 {
			p.Legend.Add("90% interval", l)
		}
	}
	if err := markTruth(p, d, func(t *HaloTruth) float64 { return t.VEscKms }, top, ps); err != nil {
		return ps, nil, err
	}
	ps.Note = fmt.Sprintf("median %.0f km/s, 90%% interval [%.0f, %.0f] km/s, k marginalised over its prior", r.Median, r.Lo90, r.Hi90)
	svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
	return ps, svg, err
}

// massPosteriorPlot: the posterior of the escape speed at the Sun placed
// at the M200 each of its grid nodes maps to.
func massPosteriorPlot(d *data) (*PlotSummary, []byte, error) {
	cv := d.inference.Curves
	ps := &PlotSummary{File: "weigh_posterior.svg", Title: "Posterior of the halo mass M200 (velocity tail)", Points: map[string]int{}}
	p := newPlot(ps.Title, "log10 M200 (Msun)", "posterior weight per escape-speed node")
	var xys plotter.XYs
	top := 0.0
	for i, m := range cv.M200GridMsun {
		if m > 0 {
			xys = append(xys, plotter.XY{X: math.Log10(m), Y: cv.VEscPosterior[i]})
			top = math.Max(top, cv.VEscPosterior[i])
		}
	}
	if len(xys) < 2 {
		ps.Note = "no posterior to draw"
		svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
		return ps, svg, err
	}
	if l, err := line(p, xys, black, vg.Points(1.5)); err != nil {
		return ps, nil, err
	} else {
		p.Legend.Add("posterior", l)
	}
	if err := markTruth(p, d, func(t *HaloTruth) float64 { return logOrZero(t.M200TailMsun) }, top, ps); err != nil {
		return ps, nil, err
	}
	ps.Note = "each node of the escape-speed grid placed at the M200 that gives it (NFW on the Dutton & Maccio 2014 relation, the campaign model's bulge and disk)"
	svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
	return ps, svg, err
}

// orbitPlot: the orbit method's profile log-likelihood against M200.
func orbitPlot(d *data) (*PlotSummary, []byte, error) {
	cv := d.inference.Curves
	ps := &PlotSummary{File: "weigh_orbits.svg", Title: "Ejectee orbits: profile likelihood of the halo mass", Points: map[string]int{}}
	p := newPlot(ps.Title, "log10 M200 (Msun)", "ln L - max ln L")
	if len(cv.OrbitM200Msun) < 2 {
		ps.Note = "the orbit method had no candidate ejectee"
		svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
		return ps, svg, err
	}
	best := slicesMax(cv.OrbitLogLike)
	var xys plotter.XYs
	lowest := 0.0
	for i, m := range cv.OrbitM200Msun {
		y := cv.OrbitLogLike[i] - best
		xys = append(xys, plotter.XY{X: math.Log10(m), Y: y})
		lowest = math.Min(lowest, y)
	}
	if l, err := line(p, xys, black, vg.Points(1.5)); err != nil {
		return ps, nil, err
	} else {
		p.Legend.Add("profile likelihood", l)
	}
	if t := d.opt.Truth; t != nil && t.M200Msun > 0 {
		x := math.Log10(t.M200Msun)
		if l, err := line(p, plotter.XYs{{X: x, Y: lowest}, {X: x, Y: 0}}, truthColor, vg.Points(1.5), truthMark...); err != nil {
			return ps, nil, err
		} else {
			p.Legend.Add("truth (invented scenario)", l)
			ps.Extra++
		}
	}
	ps.Note = fmt.Sprintf("%d halo masses (the campaign model's halo scaled)", len(xys))
	svg, err := toSVG(p, 16*vg.Centimeter, 10*vg.Centimeter)
	return ps, svg, err
}

// markTruth draws the true value (of the options' truth, when set) as a
// dashed vertical line up to top.
func markTruth(p *plot.Plot, d *data, of func(*HaloTruth) float64, top float64, ps *PlotSummary) error {
	t := d.opt.Truth
	if t == nil {
		return nil
	}
	x := of(t)
	if x == 0 {
		return nil
	}
	l, err := line(p, plotter.XYs{{X: x, Y: 0}, {X: x, Y: top}}, truthColor, vg.Points(1.5), truthMark...)
	if err != nil {
		return err
	}
	p.Legend.Add("truth (invented scenario)", l)
	ps.Extra++
	return nil
}

func logOrZero(x float64) float64 {
	if x > 0 {
		return math.Log10(x)
	}
	return 0
}

func slicesMax(xs []float64) float64 {
	m := math.Inf(-1)
	for _, x := range xs {
		m = math.Max(m, x)
	}
	return m
}
