package healpix

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// Source: healpy query_disc(nest=True), testdata/healpix/disc.csv: discs at
// the poles, across the RA wrap, across |z| = 2/3, the equator and random
// centres, radii 1 arcsec to 10 deg, orders 0..29. Ours must contain
// healpy's inclusive=False set (pixels whose centre is in the disc) and its
// inclusive=True set (healpy's own conservative superset).
func TestQueryDiscHealpyTable(t *testing.T) {
	rows := readTable(t, "disc.csv")
	var buf []uint64
	var ours, theirs int
	for _, r := range rows {
		order := int(atoi(t, r[0]))
		theta, phi, radius := atof(t, r[1]), atof(t, r[2]), atof(t, r[3])
		inclusive := r[4] == "1"
		var want []uint64
		for _, f := range strings.Fields(r[5]) {
			want = append(want, uint64(atoi(t, f)))
		}
		buf = QueryDiscNest(order, theta, phi, radius, buf)
		if !slices.IsSorted(buf) {
			t.Fatalf("order %d: result not sorted", order)
		}
		missing := 0
		for _, p := range want {
			if _, ok := slices.BinarySearch(buf, p); !ok {
				missing++
			}
		}
		if missing > 0 {
			t.Errorf("order %d theta %v phi %v radius %v inclusive %v: %d of healpy's %d pixels missing",
				order, theta, phi, radius, inclusive, missing, len(want))
		}
		if inclusive {
			ours += len(buf)
			theirs += len(want)
		}
	}
	t.Logf("%d discs; ours return %d pixels in all, healpy inclusive=True %d (ratio %.2f)",
		len(rows)/2, ours, theirs, float64(ours)/float64(theirs))
}

// subCentres are the unit vectors of the centres of all pixels at
// order+sub, in nested order: the 4^sub sub-pixels of pixel p are
// p<<2sub .. (p+1)<<2sub - 1.
func subCentres(order, sub int) [][3]float64 {
	n := NPix(order + sub)
	v := make([][3]float64, n)
	for p := range n {
		v[p] = unitVector(Pix2AngNest(order+sub, p))
	}
	return v
}

// Source: common practice (brute force). Every pixel at order 1..3 holding a
// sub-pixel centre (order+6, 4096 points per pixel) inside the disc must be
// returned.
func TestQueryDiscBruteForce(t *testing.T) {
	const sub = 6
	discs := [][3]float64{ // theta, phi, radius (rad)
		{0, 0, 0.05}, {math.Pi, 1, 0.3}, {1e-9, 2, 0.2}, {math.Pi / 2, 0, 0.1},
		{math.Pi / 2, 2*math.Pi - 1e-3, 0.4}, {math.Acos(2.0 / 3), 0.3, 0.15},
		{math.Acos(-2.0 / 3), 4, 0.02}, {1.0, 5.5, 1.2}, {2.2, 0.1, 1e-4}, {0.4, 3.0, 2.5},
	}
	for order := 1; order <= 3; order++ {
		centres := subCentres(order, sub)
		var got []uint64
		for _, d := range discs {
			got = QueryDiscNest(order, d[0], d[1], d[2], got)
			c := unitVector(d[0], d[1])
			need := map[uint64]bool{}
			for s, v := range centres {
				if angleRad(c, v) <= d[2] {
					need[uint64(s)>>(2*sub)] = true
				}
			}
			need[Ang2PixNest(order, d[0], d[1])] = true
			for p := range need {
				if _, ok := slices.BinarySearch(got, p); !ok {
					t.Errorf("order %d disc %v: pixel %d meets the disc but is missing", order, d, p)
				}
			}
		}
	}
}

// Source: the derivation beside maxPixRadRad. Every sampled point of every
// pixel at orders 0..3 (sub-pixel centres at order+6) is within the bound of
// the pixel centre; logs how loose the bound is.
func TestMaxPixRad(t *testing.T) {
	const sub = 6
	for order := 0; order <= 3; order++ {
		centres := subCentres(order, sub)
		bound := maxPixRadRad(order)
		maxRad := 0.0
		for p := range NPix(order) {
			c := unitVector(Pix2AngNest(order, p))
			for s := p << (2 * sub); s < (p+1)<<(2*sub); s++ {
				maxRad = math.Max(maxRad, angleRad(c, centres[s]))
			}
		}
		if maxRad > bound {
			t.Errorf("order %d: sampled radius %v exceeds bound %v", order, maxRad, bound)
		}
		t.Logf("order %d: sampled max radius %.4g rad, bound %.4g rad (x%.2f)", order, maxRad, bound, bound/maxRad)
	}
}

// Source: the doc of QueryDiscNest.
func TestQueryDiscEdgeCases(t *testing.T) {
	if got := QueryDiscNest(5, 1, 1, -1, nil); len(got) != 0 {
		t.Errorf("negative radius: %d pixels", len(got))
	}
	if got := QueryDiscNest(5, 1, 1, math.NaN(), nil); len(got) != 0 {
		t.Errorf("NaN radius: %d pixels", len(got))
	}
	if got := QueryDiscNest(2, 1, 1, math.Pi, nil); len(got) != int(NPix(2)) {
		t.Errorf("whole sphere: %d pixels", len(got))
	}
	got := QueryDiscNest(29, 0.3, 0.2, 0, nil)
	if _, ok := slices.BinarySearch(got, Ang2PixNest(29, 0.3, 0.2)); !ok {
		t.Error("zero radius: the pixel holding the centre is missing")
	}
}

// ParentsNear relies on QueryDiscNest returning exactly the pixels whose
// centre lies within radius + MaxPixRadRad of the disc centre (its walk
// must not miss one that is not connected through others). Checked by
// brute force over every pixel at order 5, for random centres (poles and
// the RA wrap included) and radii from a fraction of a pixel to several.
func TestQueryDiscExactCentres(t *testing.T) {
	const order = 5
	n := NPix(order)
	centres := make([][3]float64, n)
	for p := range n {
		centres[p] = unitVector(Pix2AngNest(order, p))
	}
	rng := rand.New(rand.NewPCG(11, 5))
	m := MaxPixRadRad(order)
	var got []uint64
	points := [][2]float64{{0, 0}, {math.Pi, 1}, {math.Pi / 2, 0}, {math.Pi / 2, 2*math.Pi - 1e-9}}
	for range 300 {
		points = append(points, [2]float64{math.Acos(2*rng.Float64() - 1), 2 * math.Pi * rng.Float64()})
	}
	for k, pt := range points {
		radius := m * 4 * rng.Float64()
		if k%3 == 0 {
			radius = m * 0.1 * rng.Float64()
		}
		got = QueryDiscNest(order, pt[0], pt[1], radius, got)
		c := unitVector(pt[0], pt[1])
		start := Ang2PixNest(order, pt[0], pt[1])
		var want []uint64
		for p := range n {
			if p == start || angleRad(c, centres[p]) <= radius+m {
				want = append(want, p)
			}
		}
		if !slices.Equal(got, want) {
			t.Fatalf("theta %v phi %v radius %v: walk gave %d pixels, brute force %d", pt[0], pt[1], radius, len(got), len(want))
		}
	}
}

// DiscInside must never claim a disc lies in one pixel when a point of it
// lies in another: checked against ParentsNear (which walks every fine
// pixel whose centre is within reach) for random points and radii of a
// fraction to a few fine pixels, at tile orders 0..6, the poles included.
func TestDiscInsideNeverWrong(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 6))
	var sc, parents []uint64
	claimed := 0
	for k := range 20000 {
		order := k % 7
		fine := order + 4 + k%5
		theta, phi := math.Acos(2*rng.Float64()-1), 2*math.Pi*rng.Float64()
		if k%50 == 0 {
			theta = 1e-3 * rng.Float64() // near the north pole
		}
		r := MaxPixRadRad(fine) * 3 * rng.Float64()
		pix, inside := DiscInside(order, fine, theta, phi, r+MaxPixRadRad(fine))
		if want := Ang2PixNest(order, theta, phi); pix != want {
			t.Fatalf("pixel %d, Ang2PixNest says %d", pix, want)
		}
		if !inside {
			continue
		}
		claimed++
		parents, sc = ParentsNear(order, fine, theta, phi, r, sc, parents)
		if len(parents) != 1 || parents[0] != pix {
			t.Fatalf("order %d fine %d theta %v phi %v r %v: DiscInside says only %d, ParentsNear finds %v", order, fine, theta, phi, r, pix, parents)
		}
	}
	if claimed < 5000 {
		t.Fatalf("only %d of 20000 discs claimed inside: the test checks too little", claimed)
	}
}
