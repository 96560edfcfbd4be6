package report

import (
	"bytes"
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"starvet/campaign"
	"starvet/galaxy/frames"
	"starvet/galaxy/potential"
	"starvet/internal/numfmt"
	"starvet/internal/units"
	"starvet/internal/vec"
	"starvet/verdict"
)

var (
	black     = color.RGBA{0, 0, 0, 0xFF}
	gridGrey  = color.RGBA{0xC8, 0xC8, 0xC8, 0xFF}
	curveGrey = color.RGBA{0x44, 0x44, 0x44, 0xFF}
)

func toSVG(p *plot.Plot, w, h vg.Length) ([]byte, error) {
	c := vgsvg.New(w, h)
	p.Draw(draw.New(c))
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

func newPlot(title, xLabel, yLabel string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = xLabel
	p.Y.Label.Text = yLabel
	p.Legend.Top = true
	p.Legend.TextStyle.Font.Size = vg.Points(9)
	return p
}

// scatter adds one status's markers with a legend entry "status (n)".
func scatter(p *plot.Plot, status string, xys plotter.XYs) error {
	st := styleOf(status)
	s, err := plotter.NewScatter(xys)
	if err != nil {
		return err
	}
	s.GlyphStyle = draw.GlyphStyle{Color: st.Color, Shape: st.Shape, Radius: st.Radius}
	p.Add(s)
	p.Legend.Add(fmt.Sprintf("%s (%d)", status, len(xys)), s)
	return nil
}

func line(p *plot.Plot, xys plotter.XYs, c color.Color, width vg.Length, dashes ...vg.Length) (*plotter.Line, error) {
	l, err := plotter.NewLine(xys)
	if err != nil {
		return nil, err
	}
	l.LineStyle = draw.LineStyle{Color: c, Width: width, Dashes: dashes}
	p.Add(l)
	return l, nil
}

// speedPlot is plot 1: Galactocentric speed against distance with the
// 16-84 per cent range, over the escape speed of the adopted model.
func speedPlot(d *data) (*PlotSummary, []byte, error) {
	ps := &PlotSummary{File: "speed.svg", Title: "Galactocentric speed against Galactocentric distance", Points: map[string]int{}}
	p := newPlot(ps.Title, "Galactocentric distance r (kpc, logarithmic)", "Galactocentric speed (km/s)")
	sp := collectSpeeds(d)
	// Distances span two decades: a logarithmic axis keeps the stars near
	// the Sun apart from the fast ones far out.
	rLo, rHi := math.Min(sp.rMin/1.25, 1), sp.rMax*1.25
	if err := drawEscapeSpeed(p, ps, d, sp.vesc, rLo, rHi); err != nil {
		return ps, nil, err
	}
	if err := drawSpeeds(p, ps, sp); err != nil {
		return ps, nil, err
	}
	p.X.Scale, p.X.Tick.Marker = plot.LogScale{}, plot.LogTicks{Prec: -1}
	p.X.Min, p.X.Max = rLo, rHi
	// Head room above the data for the legend in the top right corner.
	p.Y.Min, p.Y.Max = 0, 1.3*math.Max(p.Y.Max, 100)
	p.Y.Tick.Marker = linearTicks{}
	for _, st := range sortStatuses(boolKeys(sp.omitted)) {
		ps.Omitted += sp.omitted[st]
		ps.Note += fmt.Sprintf(" Not drawn: %d %s star(s) without a full speed.", sp.omitted[st], st)
	}
	svg, err := toSVG(p, 7.5*vg.Inch, 5.2*vg.Inch)
	return ps, svg, err
}

// speeds are plot 1's stars by status, with what was left out.
type speeds struct {
	pts        map[string]plotter.XYs
	bars       map[string]plotter.YErrors
	present    map[string]bool
	omitted    map[string]int // status -> stars without a full speed
	vesc       plotter.XYs    // each drawn star's own escape speed
	rMin, rMax float64
}

func collectSpeeds(d *data) *speeds {
	sp := &speeds{pts: map[string]plotter.XYs{}, bars: map[string]plotter.YErrors{}, present: map[string]bool{},
		omitted: map[string]int{}, rMin: math.Inf(1)}
	for i := range d.stars {
		s := &d.stars[i]
		if !vec.Finite(s.SpeedP50Kms) || !(s.RGCKpc > 0) || math.IsInf(s.RGCKpc, 0) {
			if s.Status != string(verdict.Rejected) && s.Status != string(verdict.Withdrawn) {
				sp.omitted[s.Status]++
			}
			continue
		}
		lo, hi := 0.0, 0.0
		if vec.Finite(s.SpeedP16Kms) {
			lo = math.Max(0, s.SpeedP50Kms-s.SpeedP16Kms)
		}
		if vec.Finite(s.SpeedP84Kms) {
			hi = math.Max(0, s.SpeedP84Kms-s.SpeedP50Kms)
		}
		sp.pts[s.Status] = append(sp.pts[s.Status], plotter.XY{X: s.RGCKpc, Y: s.SpeedP50Kms})
		sp.bars[s.Status] = append(sp.bars[s.Status], struct{ Low, High float64 }{lo, hi})
		sp.present[s.Status] = true
		sp.rMin, sp.rMax = math.Min(sp.rMin, s.RGCKpc), math.Max(sp.rMax, s.RGCKpc)
		if vec.Finite(s.VEscKms) {
			sp.vesc = append(sp.vesc, plotter.XY{X: s.RGCKpc, Y: s.VEscKms})
		}
	}
	if sp.rMax == 0 {
		sp.rMin, sp.rMax = 1, 100
	}
	return sp
}

// drawEscapeSpeed draws the model's escape-speed curves over [rLo, rHi]
// when the model can be rebuilt, else each star's own escape speed.
func drawEscapeSpeed(p *plot.Plot, ps *PlotSummary, d *data, vesc plotter.XYs, rLo, rHi float64) error {
	var model *potential.Model
	if len(d.models) == 1 && d.models[0] != campaign.ComponentsModel {
		model, _ = potential.Builtin(d.models[0])
	}
	switch {
	case model != nil:
		ps.HasCurve = true
		var plane, pole plotter.XYs
		for k := 0; k <= 200; k++ {
			r := rLo * math.Pow(rHi/rLo, float64(k)/200)
			plane = append(plane, plotter.XY{X: r, Y: model.EscapeSpeed([3]float64{r, 0, 0}, d.opt.EscapeRadiusKpc)})
			pole = append(pole, plotter.XY{X: r, Y: model.EscapeSpeed([3]float64{0, 0, r}, d.opt.EscapeRadiusKpc)})
		}
		l1, err := line(p, plane, curveGrey, 1.2)
		if err != nil {
			return err
		}
		l2, err := line(p, pole, curveGrey, 1.2, vg.Points(5), vg.Points(3))
		if err != nil {
			return err
		}
		p.Legend.Add("escape speed in the plane", l1)
		p.Legend.Add("escape speed toward the pole", l2)
		ps.Note = fmt.Sprintf("Curves: escape speed of model %s %s, in the Galactic plane (solid) and along the axis toward the north Galactic pole (dashed).",
			d.models[0], escapeText(d.opt.EscapeRadiusKpc))
	case len(vesc) > 0:
		s, err := plotter.NewScatter(vesc)
		if err != nil {
			return err
		}
		s.GlyphStyle = draw.GlyphStyle{Color: black, Shape: draw.RingGlyph{}, Radius: 1.6}
		p.Add(s)
		p.Legend.Add("each star's own escape speed", s)
		ps.Extra = len(vesc)
		ps.Note = fmt.Sprintf("The model (%s) cannot be rebuilt from the ledger, so no escape-speed curve is drawn; the small black rings are each star's own stored escape speed.", modelsText(d.models))
	default:
		ps.Note = "No escape speed to draw: the run has no model name and no stored escape speeds."
	}
	return nil
}

// drawSpeeds draws every status's 16-84 ranges first, then its markers
// over them.
func drawSpeeds(p *plot.Plot, ps *PlotSummary, sp *speeds) error {
	for _, st := range sortStatuses(sp.present) {
		eb := &plotter.YErrorBars{XYs: sp.pts[st], YErrors: sp.bars[st], CapWidth: 2,
			LineStyle: draw.LineStyle{Color: styleOf(st).Color, Width: 0.6}}
		p.Add(eb)
	}
	for _, st := range sortStatuses(sp.present) {
		if err := scatter(p, st, sp.pts[st]); err != nil {
			return err
		}
		ps.Points[st] = len(sp.pts[st])
	}
	return nil
}

// linearTicks labels round steps (1, 2 or 5 times a power of ten) with
// three to eight labelled ticks and four minor ticks between them.
type linearTicks struct{}

func (linearTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) {
		return nil
	}
	raw := (hi - lo) / 8
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step := mag
	for _, m := range []float64{1, 2, 5, 10} {
		if m*mag >= raw {
			step = m * mag
			break
		}
	}
	decimals := max(0, int(-math.Floor(math.Log10(step)+1e-9)))
	var ts []plot.Tick
	minor := step / 5
	for k := math.Ceil(lo / minor); k*minor <= hi; k++ {
		v := k * minor
		t := plot.Tick{Value: v}
		if math.Abs(math.Remainder(v, step)) < minor/100 {
			t.Label = numfmt.Fixed(v, decimals)
		}
		ts = append(ts, t)
	}
	return ts
}

func boolKeys(m map[string]int) map[string]bool {
	out := map[string]bool{}
	for k := range m {
		out[k] = true
	}
	return out
}

func escapeText(rKpc float64) string {
	if rKpc > 0 {
		return "(escape to r = " + numfmt.Exact(rKpc) + " kpc along the same ray)"
	}
	return "(escape to infinity)"
}

func modelsText(ms []string) string {
	if len(ms) == 0 {
		return "none recorded"
	}
	s := ""
	for i, m := range ms {
		if i > 0 {
			s += ", "
		}
		s += m
	}
	return s
}

// skyPlot is plot 2: the stars on an equal-area Hammer-Aitoff map in
// Galactic coordinates, longitude increasing to the left.
func skyPlot(d *data) (*PlotSummary, []byte, error) {
	ps := &PlotSummary{File: "sky.svg", Title: "Sky map in Galactic coordinates (Hammer-Aitoff, equal area)", Points: map[string]int{}}
	p := newPlot(ps.Title, "", "")
	p.HideAxes()
	p.Legend.Left = true
	const r2 = math.Sqrt2
	p.X.Min, p.X.Max = -2*r2*1.02, 2*r2*1.02
	p.Y.Min, p.Y.Max = -r2*1.04, r2*1.18
	if err := drawGraticule(p); err != nil {
		return ps, nil, err
	}
	pts := map[string]plotter.XYs{}
	present := map[string]bool{}
	for i := range d.stars {
		s := &d.stars[i]
		if !s.hasPos {
			ps.Omitted++
			continue
		}
		l, b := frames.ICRSToGalactic(s.raDeg*units.RadPerDeg, s.decDeg*units.RadPerDeg)
		x, y := HammerAitoff(wrapLon(l), b)
		pts[s.Status] = append(pts[s.Status], plotter.XY{X: -x, Y: y})
		present[s.Status] = true
	}
	for _, st := range sortStatuses(present) {
		if err := scatter(p, st, pts[st]); err != nil {
			return ps, nil, err
		}
		ps.Points[st] = len(pts[st])
	}
	if ps.Omitted > 0 {
		ps.Note = fmt.Sprintf("Not drawn: %d star(s) without a stored position.", ps.Omitted)
	}
	ps.Note = "Longitude l increases to the left, l = 0 at the centre; graticule every 60° in l and 30° in b. " + ps.Note
	svg, err := toSVG(p, 9*vg.Inch, 5*vg.Inch)
	return ps, svg, err
}

// skyXY projects Galactic (l, b) in degrees onto the sky map, longitude
// increasing to the left.
func skyXY(lDeg, bDeg float64) plotter.XY {
	x, y := HammerAitoff(wrapLon(lDeg*units.RadPerDeg), bDeg*units.RadPerDeg)
	return plotter.XY{X: -x, Y: y}
}

// drawGraticule draws the meridians every 60°, the parallels every 30°,
// the map's outline and the grid's labels.
func drawGraticule(p *plot.Plot) error {
	const r2 = math.Sqrt2
	for _, lDeg := range []float64{-120, -60, 0, 60, 120} {
		var m plotter.XYs
		for b := -90.0; b <= 90; b += 2 {
			m = append(m, skyXY(lDeg, b))
		}
		if _, err := line(p, m, gridGrey, 0.5); err != nil {
			return err
		}
	}
	for _, bDeg := range []float64{-60, -30, 0, 30, 60} {
		var m plotter.XYs
		for l := -180.0; l <= 180; l += 2 {
			m = append(m, skyXY(l, bDeg))
		}
		if _, err := line(p, m, gridGrey, 0.5); err != nil {
			return err
		}
	}
	var outline plotter.XYs
	for k := 0; k <= 360; k++ {
		t := float64(k) * units.RadPerDeg
		outline = append(outline, plotter.XY{X: 2 * r2 * math.Cos(t), Y: r2 * math.Sin(t)})
	}
	if _, err := line(p, outline, curveGrey, 1); err != nil {
		return err
	}
	return drawGraticuleLabels(p)
}

func drawGraticuleLabels(p *plot.Plot) error {
	var lxy plotter.XYs
	var ltxt []string
	for _, lDeg := range []float64{120, 60, 0, -60, -120} {
		q := skyXY(lDeg, 0)
		q.Y -= 0.09
		lxy = append(lxy, q)
		ltxt = append(ltxt, numfmt.Exact(math.Mod(lDeg+360, 360))+"°")
	}
	for _, bDeg := range []float64{60, 30, -30, -60} {
		q := skyXY(0, bDeg)
		lxy = append(lxy, q)
		sign := ""
		if bDeg > 0 {
			sign = "+"
		}
		ltxt = append(ltxt, sign+numfmt.Exact(bDeg)+"°")
	}
	labels, err := plotter.NewLabels(plotter.XYLabels{XYs: lxy, Labels: ltxt})
	if err != nil {
		return err
	}
	for i := range labels.TextStyle {
		labels.TextStyle[i].Font.Size = vg.Points(8)
		labels.TextStyle[i].Color = curveGrey
	}
	p.Add(labels)
	return nil
}

// pUnboundBins is the number of equal bins of the p_unbound histogram on
// [0, 1].
const pUnboundBins = 20

// pUnboundPlot is plot 3: the histogram of p_unbound over the stars with a
// radial velocity, stacked by status.
func pUnboundPlot(d *data) (*PlotSummary, []byte, error) {
	ps := &PlotSummary{File: "p_unbound.svg", Title: "Probability of being unbound (stars with a radial velocity)", Points: map[string]int{}}
	p := newPlot(ps.Title, "p_unbound", "stars per bin (logarithmic)")
	h := &stackedHist{counts: map[string][]int{}}
	present := map[string]bool{}
	for i := range d.stars {
		s := &d.stars[i]
		if !s.HasRV {
			continue
		}
		if !vec.Finite(s.PUnbound) {
			ps.Omitted++
			continue
		}
		k := int(s.PUnbound * pUnboundBins)
		k = max(0, min(pUnboundBins-1, k))
		if h.counts[s.Status] == nil {
			h.counts[s.Status] = make([]int, pUnboundBins)
		}
		h.counts[s.Status][k]++
		present[s.Status] = true
	}
	h.order = sortStatuses(present)
	p.Add(h)
	for _, st := range h.order {
		n := 0
		for _, c := range h.counts[st] {
			n += c
			if c > 0 {
				ps.Points[st]++ // one bar segment per non-empty bin
			}
		}
		p.Legend.Add(fmt.Sprintf("%s (%d)", st, n), histThumb{st})
	}
	// Logarithmic counts: the bins near 0 and 1 hold most stars and would
	// hide the few in between. Bars start at histFloor.
	p.Y.Scale, p.Y.Tick.Marker = plot.LogScale{}, plot.LogTicks{Prec: -1}
	p.X.Min, p.X.Max = 0, 1
	p.Y.Min = histFloor
	if ps.Omitted > 0 {
		ps.Note = fmt.Sprintf("Not drawn: %d star(s) with a radial velocity but no p_unbound.", ps.Omitted)
	}
	ps.Note = fmt.Sprintf("%d bins of width %s, stacked by status. ", pUnboundBins, numfmt.Exact(1.0/pUnboundBins)) + ps.Note
	svg, err := toSVG(p, 7*vg.Inch, 4.2*vg.Inch)
	return ps, svg, err
}

// histFloor is where the bars start on the logarithmic count axis.
const histFloor = 0.5

// stackedHist draws per-bin bars stacked in status order; each non-empty
// (bin, status) cell is one filled rectangle.
type stackedHist struct {
	counts map[string][]int
	order  []string
}

func (h *stackedHist) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	for k := range pUnboundBins {
		x0, x1 := float64(k)/pUnboundBins, float64(k+1)/pUnboundBins
		base := 0
		for _, st := range h.order {
			n := h.counts[st][k]
			if n == 0 {
				continue
			}
			y0 := trY(math.Max(float64(base), histFloor))
			var r vg.Path
			r.Move(vg.Point{X: trX(x0), Y: y0})
			r.Line(vg.Point{X: trX(x1), Y: y0})
			r.Line(vg.Point{X: trX(x1), Y: trY(float64(base + n))})
			r.Line(vg.Point{X: trX(x0), Y: trY(float64(base + n))})
			r.Close()
			c.SetColor(styleOf(st).Color)
			c.Fill(r)
			// The status's shape in white inside the bar, so colour is not
			// the only cue; white fills are not counted as bars.
			ctr := vg.Point{X: (trX(x0) + trX(x1)) / 2, Y: (y0 + trY(float64(base+n))) / 2}
			if g := histGlyph(st); trY(float64(base+n))-y0 > 2*g.Radius+2 {
				c.DrawGlyph(g, ctr)
			}
			base += n
		}
	}
}

func (h *stackedHist) DataRange() (xmin, xmax, ymin, ymax float64) {
	top := 0
	for k := range pUnboundBins {
		s := 0
		for _, st := range h.order {
			s += h.counts[st][k]
		}
		top = max(top, s)
	}
	// Head room for the legend (a factor on the logarithmic axis).
	return 0, 1, histFloor, math.Max(10, float64(top)*4)
}

func histGlyph(status string) draw.GlyphStyle {
	st := styleOf(status)
	return draw.GlyphStyle{Color: color.White, Shape: st.Shape, Radius: 2.4}
}

type histThumb struct{ status string }

func (t histThumb) Thumbnail(c *draw.Canvas) {
	var r vg.Path
	r.Move(vg.Point{X: c.Min.X, Y: c.Min.Y})
	r.Line(vg.Point{X: c.Max.X, Y: c.Min.Y})
	r.Line(vg.Point{X: c.Max.X, Y: c.Max.Y})
	r.Line(vg.Point{X: c.Min.X, Y: c.Max.Y})
	r.Close()
	c.SetColor(styleOf(t.status).Color)
	c.Fill(r)
	c.DrawGlyph(histGlyph(t.status), vg.Point{X: (c.Min.X + c.Max.X) / 2, Y: (c.Min.Y + c.Max.Y) / 2})
}

// crossingPlot is plot 4: where the back-traced orbits crossed the plane
// z = 0, with the centre radius and the Sun.
func crossingPlot(d *data) (*PlotSummary, []byte, error) {
	ps := &PlotSummary{File: "crossings.svg", Title: "Back-traced crossings of the Galactic plane", Points: map[string]int{}}
	p := newPlot(ps.Title, "x (kpc), Sun to centre", "y (kpc), direction of rotation")
	pts := map[string]plotter.XYs{}
	present := map[string]bool{}
	extent := math.Max(d.opt.SunDistanceKpc+1, 1.5*d.opt.GCRadiusKpc)
	for i, c := range d.crossings {
		if !vec.Finite(c.XKpc) || !vec.Finite(c.YKpc) {
			ps.Omitted++
			continue
		}
		st := d.crossStat[i]
		pts[st] = append(pts[st], plotter.XY{X: c.XKpc, Y: c.YKpc})
		present[st] = true
		extent = math.Max(extent, math.Max(math.Abs(c.XKpc), math.Abs(c.YKpc)))
	}
	extent *= 1.08
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = -extent, extent, -extent, extent

	if err := drawCentreCircle(p, d.opt.GCRadiusKpc); err != nil {
		return ps, nil, err
	}
	for _, st := range sortStatuses(present) {
		if err := scatter(p, st, pts[st]); err != nil {
			return ps, nil, err
		}
		ps.Points[st] = len(pts[st])
	}
	if err := drawSun(p, d.opt.SunDistanceKpc); err != nil {
		return ps, nil, err
	}
	ps.Note = crossingNote(d, ps.Omitted)
	svg, err := toSVG(p, 6.8*vg.Inch, 6.8*vg.Inch)
	return ps, svg, err
}

func drawCentreCircle(p *plot.Plot, rKpc float64) error {
	var circ plotter.XYs
	for k := 0; k <= 180; k++ {
		t := float64(2*k) * units.RadPerDeg
		circ = append(circ, plotter.XY{X: rKpc * math.Cos(t), Y: rKpc * math.Sin(t)})
	}
	cl, err := line(p, circ, black, 1, vg.Points(3), vg.Points(2))
	if err != nil {
		return err
	}
	p.Legend.Add("centre radius "+numfmt.Exact(rKpc)+" kpc", cl)
	return nil
}

// drawSun marks the Sun at x = -r0 with a ring around a dot.
func drawSun(p *plot.Plot, r0Kpc float64) error {
	sun := plotter.XYs{{X: -r0Kpc, Y: 0}}
	ring, err := plotter.NewScatter(sun)
	if err != nil {
		return err
	}
	ring.GlyphStyle = draw.GlyphStyle{Color: black, Shape: draw.RingGlyph{}, Radius: 4.5}
	dot, err := plotter.NewScatter(sun)
	if err != nil {
		return err
	}
	dot.GlyphStyle = draw.GlyphStyle{Color: black, Shape: draw.CircleGlyph{}, Radius: 1.2}
	p.Add(ring, dot)
	p.Legend.Add("Sun (x = "+numfmt.Exact(-r0Kpc)+" kpc)", ring, dot)
	return nil
}

// crossingNote says where the centre radius and the Sun come from and
// what was not drawn.
func crossingNote(d *data, omitted int) string {
	src := d.opt.SettingsSource
	if src == "" {
		src = "given in the options"
	}
	gcText := "The dashed circle is the centre radius, " + numfmt.Exact(d.opt.GCRadiusKpc) + " kpc (" + src + ")."
	if d.gcDefault {
		gcText = "The dashed circle is the centre radius, " + numfmt.Exact(d.opt.GCRadiusKpc) + " kpc: the default, since this run's setting is not recorded in the ledger."
	}
	sunText := "Sun at x = " + numfmt.Exact(-d.opt.SunDistanceKpc) + " kpc"
	if d.sunDefault {
		sunText += " (starvet's default Solar distance; this run's is not recorded in the ledger)"
	}
	note := gcText + " " + sunText + "."
	if len(d.crossings) == 0 {
		note += " The ledger holds no crossings for the stars of this run (none was traced back, or the run predates the crossings table)."
	}
	if omitted > 0 {
		note += fmt.Sprintf(" Not drawn: %d crossing(s) with a missing coordinate.", omitted)
	}
	return note
}
