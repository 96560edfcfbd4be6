package crossmatch

import (
	"math"
	"testing"
)

func TestBayesFactorHandCase(t *testing.T) {
	// Budavari & Szalay 2008, ApJ 679, 301, two catalogs, circular errors:
	// B = 2/(s1^2+s2^2) exp(-psi^2 / (2 (s1^2+s2^2))), radians.
	// Hand arithmetic, 1 arcsec = pi/648000 rad = 4.84813681109536e-6 rad,
	// 1 arcsec^2 = 2.3504430539097885e-11 rad^2:
	//   s1 = 0.1", s2 = 0.2", psi = 0.3"
	//   s1^2+s2^2 = 0.05 arcsec^2 = 1.1752215269548943e-12 rad^2
	//   2/(s1^2+s2^2) = 1.701806811846088e12
	//   psi^2/(2 (s1^2+s2^2)) = 0.09/0.1 = 0.9, exp(-0.9) = 0.4065696597405991
	//   B = 1.701806811846088e12 * 0.4065696597405991 = 6.919030164364977e11
	// Second case: s1 = s2 = 1 mas, psi = 5 mas:
	//   s1^2+s2^2 = 2 mas^2, 2/(2 mas^2) = 1/(4.84813681109536e-9)^2
	//   = 4.254517029615219e16 rad^-2
	//   psi^2/(2 (s1^2+s2^2)) = 25/4 = 6.25, B = 4.254517029615219e16 exp(-6.25)
	a := math.Pi / 648000
	cases := []struct {
		name              string
		psi, s1, s2, want float64
	}{
		{"0.3 arcsec, 0.1 and 0.2 arcsec", 0.3 * a, 0.1 * a, 0.2 * a, 6.919030164364977e11},
		{"zero separation", 0, 0.1 * a, 0.2 * a, 1.701806811846088e12},
		{"5 mas, 1 and 1 mas", 5e-3 * a, 1e-3 * a, 1e-3 * a, 4.254517029615219e16 * math.Exp(-6.25)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := BayesFactor(c.psi, c.s1, c.s2)
			if math.Abs(got-c.want) > 1e-12*c.want {
				t.Errorf("BayesFactor = %.16g, want %.16g", got, c.want)
			}
			if lg := LogBayesFactor(c.psi, c.s1, c.s2); math.Abs(lg-math.Log(c.want)) > 1e-12 {
				t.Errorf("LogBayesFactor = %.16g, want ln %.16g = %.16g", lg, c.want, math.Log(c.want))
			}
		})
	}
	// Far pairs: B underflows, ln B stays exact: psi = 1", s = 1 mas each:
	// ln B = ln 2 - ln(2e-6 arcsec^2 in rad^2) - 1/(2*2e-6) = ... - 250000.
	lg := LogBayesFactor(a, 1e-3*a, 1e-3*a)
	want := math.Ln2 - math.Log(2e-6*a*a) - 250000
	if math.Abs(lg-want) > 1e-9 || BayesFactor(a, 1e-3*a, 1e-3*a) != 0 {
		t.Errorf("far pair: ln B = %g (want %g), B = %g (want underflow to 0)", lg, want, BayesFactor(a, 1e-3*a, 1e-3*a))
	}
}

func TestPriorAndPosterior(t *testing.T) {
	// P0 = N*/(N1 N2) and P = [1 + (1-P0)/(B P0)]^-1 (Budavari & Szalay
	// 2008, ApJ 679, 301). Hand arithmetic:
	//   N* = 400, N1 = 1000, N2 = 400: P0 = 400/400000 = 1e-3
	//   B = 6.919030164364977e11: (1-P0)/(B P0) = 0.999/6.919030164364977e8
	//     = 1.44384e-9, P = 1/(1+1.44384e-9) = 0.9999999985561561
	//   B = 1: P = 1/(1 + 0.999/0.001) = 1/1000 = 1e-3 (B = 1 leaves the prior)
	cases := []struct {
		name                string
		nStar, n1, n2, b    float64
		wantPrior, wantPost float64
	}{
		{"strong pair", 400, 1000, 400, 6.919030164364977e11, 1e-3, 0.9999999985561561},
		{"B = 1 keeps the prior", 400, 1000, 400, 1, 1e-3, 1e-3},
		{"no overlap", 0, 0, 0, 10, 0, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p0 := Prior(c.nStar, c.n1, c.n2)
			if math.Abs(p0-c.wantPrior) > 1e-15 {
				t.Errorf("Prior = %g, want %g", p0, c.wantPrior)
			}
			var post float64
			if p0 > 0 {
				post = Posterior(c.b, p0)
			}
			if math.Abs(post-c.wantPost) > 1e-15 {
				t.Errorf("Posterior = %.16g, want %.16g", post, c.wantPost)
			}
			if pl := PosteriorLog(math.Log(c.b), p0); math.Abs(pl-c.wantPost) > 1e-15 {
				t.Errorf("PosteriorLog = %.16g, want %.16g", pl, c.wantPost)
			}
			if q := newPosterior(p0).of(math.Log(c.b)); math.Abs(q-c.wantPost) > 1e-15 {
				t.Errorf("posterior.of = %.16g, want %.16g", q, c.wantPost)
			}
		})
	}
}

func TestOverlapPrior(t *testing.T) {
	// Cells are equal-area: 4 pi sr = 41252.96 deg^2 (common practice) over
	// 2048 cells = 20.143047485068006 deg^2 each.
	cellA := cellOf(10, 5)
	cellB := cellOf(100, -40)
	cellC := cellOf(250, 70)
	if cellA == cellB || cellB == cellC || cellA == cellC {
		t.Fatal("test cells coincide")
	}
	rep := func(c uint16, n int) []uint16 {
		s := make([]uint16, n)
		for i := range s {
			s[i] = c
		}
		return s
	}
	cases := []struct {
		name           string
		c1, c2         []uint16
		wantP0, wantSq float64
		wantN1, wantN2 int
	}{
		// primary: 10 in A, 5 in B; secondary: 3 in A, 7 in C, one without
		// position. Overlap = A: N1 = 10, N2 = 3, N* = 3, P0 = 3/30 = 0.1.
		{"one shared cell", append(rep(cellA, 10), rep(cellB, 5)...),
			append(append(rep(cellA, 3), rep(cellC, 7)...), noCell), 0.1, 20.143047485068006, 10, 3},
		// A and B shared: N1 = 15, N2 = 3 + 4 = 7, P0 = 7/105.
		{"two shared cells", append(rep(cellA, 10), rep(cellB, 5)...),
			append(rep(cellA, 3), rep(cellB, 4)...), 7.0 / 105, 2 * 20.143047485068006, 15, 7},
		{"disjoint", rep(cellA, 3), rep(cellC, 3), 0, 0, 0, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p0, sq, _, n1, n2 := overlapPrior(c.c1, c.c2)
			if math.Abs(p0-c.wantP0) > 1e-15 || math.Abs(sq-c.wantSq) > 1e-9 || n1 != c.wantN1 || n2 != c.wantN2 {
				t.Errorf("overlapPrior = P0 %g, %g deg^2, N1 %d, N2 %d; want %g, %g, %d, %d",
					p0, sq, n1, n2, c.wantP0, c.wantSq, c.wantN1, c.wantN2)
			}
		})
	}
}
