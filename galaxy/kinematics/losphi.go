package kinematics

import (
	"math"

	"starvet/galaxy/potential"
	"starvet/internal/vec"
)

// Along one line of sight the position is pos0 + d posR, so the escape speed
// is a function of the distance alone. losEscape tabulates
// psi(d) = Phi_lim(d) - Phi(pos(d)) over the drawn distances and
// interpolates it with cubic Hermite polynomials whose slopes come from the
// potential's acceleration (dPhi/dd = -a . posR). The Hermite error term is
// proportional to (d-a)^2 (d-b)^2 (e.g. Burden & Faires, Numerical
// Analysis, theorem 3.9), largest at a cell's midpoint, so a cell is split
// in two until the exact psi and its slope at the midpoint are matched
// within vescTolKms of escape speed (see refine; the value alone missed
// errors nine times larger at the quarter points of cells over the disc).
// When that needs more than maxCells cells (a line of
// sight grazing the cusp at the centre, say) the escape speed is evaluated
// exactly for every draw instead.
type losEscape struct {
	d, psi, dpsi []float64 // nodes: distance, value and derivative in d
	cells        []hermiteCell
	guide        []int   // cell lookup, see buildGuide
	guideScale   float64 // guide entries per kpc
	monotone     int     // +1 (-1): the interpolant never falls (rises) over the table; 0: not known
	ok           bool    // false: evaluate exactly per draw
}

const (
	losStartCells = 8
	losMaxDepth   = 16
	// vescTolKms bounds the escape-speed error at the cell midpoints: a psi
	// error eps moves v_esc = sqrt(2 psi) by about eps / v_esc. 1e-4 km/s is
	// far below any quoted escape-speed precision (tens of km/s, e.g. Piffl
	// et al. 2014, A&A 562, A91).
	vescTolKms = 1e-4
)

// psiAt returns psi and dpsi/dd at distance d.
func psiAt(p potential.Potential, l *lineOfSight, d, escRadiusKpc float64) (psi, dpsi float64) {
	var x [3]float64
	for i := range 3 {
		x[i] = l.pos0[i] + d*l.posR[i]
	}
	a := p.Accel(x)
	psi, dpsi = -p.Phi(x), vec.Dot(a, l.posR)
	if escRadiusKpc > 0 {
		r := math.Sqrt(vec.Dot(x, x))
		k := escRadiusKpc / r
		y := [3]float64{x[0] * k, x[1] * k, x[2] * k}
		// d y/dd = (R/r) (posR - u (u . posR)), u = x/r.
		ur := vec.Dot(x, l.posR) / r
		var dy [3]float64
		for i := range 3 {
			dy[i] = k * (l.posR[i] - x[i]/r*ur)
		}
		psi += p.Phi(y)
		dpsi -= vec.Dot(p.Accel(y), dy)
	}
	return psi, dpsi
}

// build prepares the table for distances in [dMin, dMax].
func (t *losEscape) build(p potential.Potential, l *lineOfSight, dMin, dMax, escRadiusKpc float64, maxCells int) {
	t.ok = false
	t.d, t.psi, t.dpsi = t.d[:0], t.psi[:0], t.dpsi[:0]
	if !(dMax > dMin) || maxCells < losStartCells {
		return
	}
	// psi is clamped beyond the escape radius; keep the table well inside
	// it (r(d) is convex along a line, so the ends decide).
	if escRadiusKpc > 0 {
		for _, d := range []float64{dMin, dMax} {
			pos, _ := l.at(d, 0, 0, 0)
			if math.Sqrt(vec.Dot(pos, pos)) >= 0.9*escRadiusKpc {
				return
			}
		}
	}
	step := (dMax - dMin) / losStartCells
	a := dMin
	pa, da := psiAt(p, l, a, escRadiusKpc)
	t.d, t.psi, t.dpsi = append(t.d, a), append(t.psi, pa), append(t.dpsi, da)
	for i := 1; i <= losStartCells; i++ {
		b := dMin + float64(i)*step
		if i == losStartCells {
			b = dMax
		}
		pb, db := psiAt(p, l, b, escRadiusKpc)
		if !t.refine(p, l, escRadiusKpc, a, pa, da, b, pb, db, 0, maxCells) {
			return
		}
		a, pa, da = b, pb, db
	}
	t.buildGuide()
	t.ok = true
}

// refine appends the nodes after a up to b, splitting [a, b] until the
// midpoint check passes; false when the cell budget or depth runs out.
func (t *losEscape) refine(p potential.Potential, l *lineOfSight, rLim, a, pa, da, b, pb, db float64, depth, maxCells int) bool {
	mid := 0.5 * (a + b)
	pm, dm := psiAt(p, l, mid, rLim)
	// The value error at the midpoint misses the part of the error that
	// is odd about it (a cell over a sharp feature, the disc plane say);
	// the slope error there measures that part, and h/4 times it bounds
	// its effect at the quarter points to first order. The cubic's slope
	// at the midpoint is 1.5 (p1 - p0)/h - (d0 + d1)/4.
	h := b - a
	valueErr := math.Abs(hermite(pa, da, pb, db, h, 0.5) - pm)
	slopeErr := math.Abs(1.5*(pb-pa)/h - 0.25*(da+db) - dm)
	if valueErr+0.25*h*slopeErr <= vescTolKms*math.Sqrt(2*math.Max(pm, 1)) {
		t.d, t.psi, t.dpsi = append(t.d, b), append(t.psi, pb), append(t.dpsi, db)
		return true
	}
	if depth >= losMaxDepth || len(t.d)+1 >= maxCells {
		return false
	}
	return t.refine(p, l, rLim, a, pa, da, mid, pm, dm, depth+1, maxCells) &&
		t.refine(p, l, rLim, mid, pm, dm, b, pb, db, depth+1, maxCells)
}

// hermite is the cubic with values p0, p1 and slopes d0, d1 at the ends of
// a cell of width h, at fraction s.
func hermite(p0, d0, p1, d1, h, s float64) float64 {
	s2 := s * s
	s3 := s2 * s
	return (2*s3-3*s2+1)*p0 + (s3-2*s2+s)*d0*h + (-2*s3+3*s2)*p1 + (s3-s2)*d1*h
}

// vesc returns the interpolated escape speed at distance d.
func (t *losEscape) vesc(d float64) float64 { return math.Sqrt(t.vesc2(d)) }

// vesc2 returns the interpolated square of the escape speed at distance d.
func (t *losEscape) vesc2(d float64) float64 {
	g := int((d - t.d[0]) * t.guideScale)
	i := t.guide[max(0, min(g, len(t.guide)-1))]
	// Usually the guide's cell or the next: one step without a loop (the
	// last cell is a sentinel starting at +Inf), the rare rest by loops.
	i += int(math.Float64bits(t.cells[i+1].d0-d) >> 63) // +1 when d > d0 (sign bit), no branch to mispredict
	for d > t.cells[i+1].d0 {
		i++
	}
	for i > 0 && d < t.cells[i].d0 { // rounding in g
		i--
	}
	c := &t.cells[i]
	s := (d - c.d0) * c.invH
	psi := c.c[0] + s*(c.c[1]+s*(c.c[2]+s*c.c[3]))
	if psi <= 0 {
		return 0
	}
	return 2 * psi
}

// hermiteCell is one cell's cubic in power form, psi = sum c[k] s^k with
// s = (d - d0) / h: the coefficients of hermite collected once per cell
// so that a lookup is three multiply-adds.
type hermiteCell struct {
	d0, invH float64
	c        [4]float64
}

func newHermiteCell(d0, d1, p0, dp0, p1, dp1 float64) hermiteCell {
	h := d1 - d0
	return hermiteCell{d0: d0, invH: 1 / h, c: [4]float64{
		p0,
		h * dp0,
		-3*p0 - 2*h*dp0 + 3*p1 - h*dp1,
		2*p0 + h*dp0 - 2*p1 + h*dp1,
	}}
}

// buildGuide fills the guide: guide[g] is the cell holding the start of
// the g-th of len(guide) equal distance intervals, so a lookup scans a cell
// or two from there (a guide table as in Chen & Asau 1974, J. Chinese Inst.
// Eng. 2, 197, from memory, on distances instead of probabilities).
func (t *losEscape) buildGuide() {
	n := len(t.d)
	t.cells = t.cells[:0]
	for i := range n - 1 {
		t.cells = append(t.cells, newHermiteCell(t.d[i], t.d[i+1], t.psi[i], t.dpsi[i], t.psi[i+1], t.dpsi[i+1]))
	}
	t.cells = append(t.cells, hermiteCell{d0: math.Inf(1)})
	t.monotone = t.monotonicity()
	ng := 4 * (n - 1)
	t.guide = resizeInt(t.guide, ng)
	t.guideScale = float64(ng) / (t.d[n-1] - t.d[0])
	i := 0
	for g := range ng {
		x := t.d[0] + float64(g)/t.guideScale
		for i < n-2 && x >= t.d[i+1] {
			i++
		}
		t.guide[g] = i
	}
}

// monotonicity returns +1 when every cell's cubic is non-decreasing, -1
// when every one is non-increasing, else 0. A cell with secant slope D and
// end slopes d0, d1 is monotone when a = d0/D and b = d1/D are not negative
// and a^2 + b^2 <= 9 (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17, 238,
// a sufficient condition); a flat cell needs flat ends. The clamp at zero
// in vesc2 keeps monotonicity.
func (t *losEscape) monotonicity() int {
	sign := 0
	for i := range len(t.d) - 1 {
		secant := (t.psi[i+1] - t.psi[i]) / (t.d[i+1] - t.d[i])
		s := 0
		switch {
		case secant > 0:
			s = 1
		case secant < 0:
			s = -1
		default:
			if t.dpsi[i] != 0 || t.dpsi[i+1] != 0 {
				return 0
			}
			continue
		}
		a, b := t.dpsi[i]/secant, t.dpsi[i+1]/secant
		if !(a >= 0 && b >= 0 && a*a+b*b <= 9) {
			return 0
		}
		if sign != 0 && s != sign {
			return 0
		}
		sign = s
	}
	return sign
}
