package crossmatch

import (
	"math"

	"starvet/internal/units"
)

// Bayes factor and prior of a two-catalog positional match with circular
// normal errors (Budavari & Szalay 2008, ApJ 679, 301; the two-catalog
// circular case). All angles in radians.

// BayesFactor returns B = 2/(s1^2+s2^2) * exp(-psi^2 / (2 (s1^2+s2^2))) for
// a pair at separation psiRad with positional errors s1Rad, s2Rad
// (Budavari & Szalay 2008, ApJ 679, 301). It underflows to 0 for pairs many
// sigma apart; LogBayesFactor does not.
func BayesFactor(psiRad, s1Rad, s2Rad float64) float64 {
	return math.Exp(LogBayesFactor(psiRad, s1Rad, s2Rad))
}

// LogBayesFactor returns ln B of BayesFactor without under- or overflow.
func LogBayesFactor(psiRad, s1Rad, s2Rad float64) float64 {
	s2 := s1Rad*s1Rad + s2Rad*s2Rad
	return math.Ln2 - math.Log(s2) - psiRad*psiRad/(2*s2)
}

// Prior returns the prior match probability P0 = N* / (N1 N2) for N1 and N2
// sources of the two catalogs in their common area and N* expected true
// pairs (Budavari & Szalay 2008, ApJ 679, 301). It is 0 when there is no
// overlap.
func Prior(nStar, n1, n2 float64) float64 {
	if n1 <= 0 || n2 <= 0 || nStar <= 0 {
		return 0
	}
	return nStar / (n1 * n2)
}

// Posterior returns P = [1 + (1-P0)/(B P0)]^-1 (Budavari & Szalay 2008,
// ApJ 679, 301) for Bayes factor b and prior p0.
func Posterior(b, p0 float64) float64 {
	return 1 / (1 + (1-p0)/(b*p0))
}

// PosteriorLog is Posterior for lnB = ln B, computed as
// 1 / (1 + exp(ln((1-P0)/P0) - lnB)) so that huge or tiny B do not overflow.
func PosteriorLog(lnB, p0 float64) float64 {
	switch {
	case p0 <= 0:
		return 0
	case p0 >= 1:
		return 1
	}
	return 1 / (1 + math.Exp(math.Log((1-p0)/p0)-lnB))
}

// posterior evaluates PosteriorLog for a fixed prior.
type posterior struct {
	p0, odds, lnOdds float64 // odds = (1-P0)/P0
}

func newPosterior(p0 float64) posterior {
	return posterior{p0: p0, odds: (1 - p0) / p0, lnOdds: math.Log((1 - p0) / p0)}
}

// ofB is of for b = exp(lnB) already computed; it avoids a second exp
// unless b under- or overflowed.
func (q posterior) ofB(b, lnB float64) float64 {
	if q.p0 <= 0 || q.p0 >= 1 || b == 0 || math.IsInf(b, 0) {
		return q.of(lnB)
	}
	return 1 / (1 + q.odds/b)
}

func (q posterior) of(lnB float64) float64 {
	switch {
	case q.p0 <= 0:
		return 0
	case q.p0 >= 1:
		return 1
	}
	return 1 / (1 + math.Exp(q.lnOdds-lnB))
}

// Overlap cells: the sky is cut into cellBands bands of equal height in
// sin(dec), each cut into cellRACols equal RA ranges, so every cell has the
// same area 4 pi / (cellBands cellRACols) sr (about 20.1 deg^2). This is our
// own coarse grid, not a standard pixelisation.
const (
	cellBands  = 32
	cellRACols = 64
	numCells   = cellBands * cellRACols
	// sqDegPerSr is (180/pi)^2.
	sqDegPerSr = units.DegPerRad * units.DegPerRad
	cellSqDeg  = 4 * math.Pi / numCells * sqDegPerSr
)

// cellOf returns the overlap cell of a position in degrees (ra in [0, 360)).
func cellOf(raDeg, decDeg float64) uint16 {
	z := math.Sin(decDeg * units.RadPerDeg)
	b := int((z + 1) / 2 * cellBands)
	b = min(max(b, 0), cellBands-1)
	c := int(raDeg / 360 * cellRACols)
	c = min(max(c, 0), cellRACols-1)
	return uint16(b*cellRACols + c)
}

// noCell marks a row without a position.
const noCell = math.MaxUint16

// overlapPrior estimates the prior from the cells occupied by both
// catalogs: N1, N2 are the counts of each catalog in those cells and
// N* = min(N1, N2), i.e. every source of the smaller catalog inside the
// overlap is assumed to have a counterpart. Then P0 = min(N1,N2)/(N1 N2).
func overlapPrior(cells1, cells2 []uint16) (p0, overlapSqDeg float64, nCells, n1, n2 int) {
	var c1, c2 [numCells]int
	for _, c := range cells1 {
		if c != noCell {
			c1[c]++
		}
	}
	for _, c := range cells2 {
		if c != noCell {
			c2[c]++
		}
	}
	for k := range c1 {
		if c1[k] > 0 && c2[k] > 0 {
			nCells++
			n1 += c1[k]
			n2 += c2[k]
		}
	}
	p0 = Prior(float64(min(n1, n2)), float64(n1), float64(n2))
	return p0, float64(nCells) * cellSqDeg, nCells, n1, n2
}
