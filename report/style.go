package report

import (
	"image/color"
	"math"
	"sort"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"starvet/verdict"
)

// The report reads statuses as the ledger stores them (TEXT, possibly a word
// this version does not know), so it keys them by string.

// Statuses in drawing order: the rarest and most interesting last, so they
// sit on top.
var drawOrder = words(verdict.Rejected, verdict.Withdrawn, verdict.NeedsRV, verdict.Bound, verdict.Marginal, verdict.Unbound)

// tableOrder is the order of the status counts table.
var tableOrder = words(verdict.All()...)

func words(ss ...verdict.Status) []string {
	out := make([]string, len(ss))
	for i, s := range ss {
		out[i] = string(s)
	}
	return out
}

type statusStyle struct {
	Color  color.RGBA
	Shape  draw.GlyphDrawer
	Radius vg.Length
	Symbol string // described in the legend text of the page
}

// Colours from the Okabe-Ito palette (Okabe & Ito 2008, "Color Universal
// Design"), chosen to stay apart for the common colour-vision deficiencies;
// the grey for rejected stars is ours. Every status also has its own filled
// shape so colour is never the only cue. Each fill colour is used by one
// status only: the tests count markers by it.
var styles = map[string]statusStyle{
	string(verdict.Unbound):   {rgb(0xD5, 0x5E, 0x00), polyGlyph(triangleUp), 3.2, "vermillion triangle"},
	string(verdict.Marginal):  {rgb(0xE6, 0x9F, 0x00), polyGlyph(diamond), 3.2, "orange diamond"},
	string(verdict.Bound):     {rgb(0x00, 0x72, 0xB2), draw.CircleGlyph{}, 2.4, "blue circle"},
	string(verdict.NeedsRV):   {rgb(0x00, 0x9E, 0x73), polyGlyph(triangleDown), 2.4, "bluish-green inverted triangle"},
	string(verdict.Rejected):  {rgb(0xA0, 0xA0, 0xA0), draw.BoxGlyph{}, 1.0, "grey square"},
	string(verdict.Withdrawn): {rgb(0xCC, 0x79, 0xA7), polyGlyph(plus), 2.6, "reddish-purple plus"},
}

// otherStyle is for a status word this version does not know.
var otherStyle = statusStyle{rgb(0x56, 0xB4, 0xE9), polyGlyph(hexagon), 2.6, "sky-blue hexagon"}

func styleOf(status string) statusStyle {
	if s, ok := styles[status]; ok {
		return s
	}
	return otherStyle
}

func rgb(r, g, b uint8) color.RGBA { return color.RGBA{r, g, b, 0xFF} }

// hexColor is the colour as vgsvg writes it in a fill style.
func hexColor(c color.RGBA) string {
	const digits = "0123456789ABCDEF"
	b := []byte{'#', 0, 0, 0, 0, 0, 0}
	for i, v := range []uint8{c.R, c.G, c.B} {
		b[1+2*i], b[2+2*i] = digits[v>>4], digits[v&15]
	}
	return string(b)
}

// sortStatuses orders the statuses present: known ones in drawOrder, unknown
// ones after them alphabetically.
func sortStatuses(present map[string]bool) []string {
	var out []string
	for _, s := range drawOrder {
		if present[s] {
			out = append(out, s)
		}
	}
	var other []string
	for s := range present {
		if _, ok := styles[s]; !ok {
			other = append(other, s)
		}
	}
	sort.Strings(other)
	return append(out, other...)
}

// polyGlyph is a filled polygon with vertices in units of the glyph radius.
type polyGlyph [][2]float64

func (g polyGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	p := make(vg.Path, 0, len(g)+1)
	for i, v := range g {
		q := vg.Point{X: pt.X + sty.Radius*vg.Length(v[0]), Y: pt.Y + sty.Radius*vg.Length(v[1])}
		if i == 0 {
			p.Move(q)
		} else {
			p.Line(q)
		}
	}
	p.Close()
	c.Fill(p)
}

var (
	triangleUp   = [][2]float64{{0, 1.25}, {-1.08, -0.625}, {1.08, -0.625}}
	triangleDown = [][2]float64{{0, -1.25}, {1.08, 0.625}, {-1.08, 0.625}}
	diamond      = [][2]float64{{0, 1.3}, {1, 0}, {0, -1.3}, {-1, 0}}
	plus         = [][2]float64{{-0.35, 1}, {0.35, 1}, {0.35, 0.35}, {1, 0.35}, {1, -0.35}, {0.35, -0.35},
		{0.35, -1}, {-0.35, -1}, {-0.35, -0.35}, {-1, -0.35}, {-1, 0.35}, {-0.35, 0.35}}
	hexagon = func() [][2]float64 {
		var h [][2]float64
		for i := range 6 {
			a := float64(i) * math.Pi / 3
			h = append(h, [2]float64{math.Cos(a), math.Sin(a)})
		}
		return h
	}()
)
