package healpix

import (
	"math"
	"testing"
)

// Source: common practice and Gorski et al. 2005, fig. 3. Adjacency is
// symmetric, and at each of the 8 points where only three base faces meet
// (|z| = 2/3) the 3 pixels touching it have 7 neighbours: 24 missing entries.
func TestNeighboursSymmetric(t *testing.T) {
	for _, order := range []int{0, 1, 3} {
		seven := 0
		for p := uint64(0); p < NPix(order); p++ {
			nb := NeighboursNest(order, p)
			for _, q := range nb {
				if q < 0 {
					seven++
					continue
				}
				found := false
				for _, r := range NeighboursNest(order, uint64(q)) {
					found = found || r == int64(p)
				}
				if !found {
					t.Errorf("order %d: %d lists %d but not back", order, p, q)
				}
			}
		}
		if seven != 24 {
			t.Errorf("order %d: %d pixels with 7 neighbours, want 24", order, seven)
		}
	}
}

// Source: the direction names. For pixels well inside the equatorial zone
// the N neighbour's centre is north (smaller theta), S south, E east and W
// west of the pixel's centre.
func TestNeighboursDirections(t *testing.T) {
	const order = 8
	for p := uint64(0); p < NPix(order); p += 997 {
		theta, phi := Pix2AngNest(order, p)
		if math.Abs(math.Cos(theta)) > 0.6 {
			continue
		}
		nb := NeighboursNest(order, p)
		tn, _ := Pix2AngNest(order, uint64(nb[3]))
		ts, _ := Pix2AngNest(order, uint64(nb[7]))
		_, pe := Pix2AngNest(order, uint64(nb[5]))
		_, pw := Pix2AngNest(order, uint64(nb[1]))
		if !(tn < theta && ts > theta) {
			t.Errorf("pix %d: N theta %v, S theta %v around %v", p, tn, ts, theta)
		}
		if !(math.Remainder(pe-phi, 2*math.Pi) > 0 && math.Remainder(pw-phi, 2*math.Pi) < 0) {
			t.Errorf("pix %d: E phi %v, W phi %v around %v", p, pe, pw, phi)
		}
	}
}
