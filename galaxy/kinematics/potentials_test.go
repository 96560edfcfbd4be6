package kinematics

import (
	"math"
	"testing"

	"starvet/internal/units"
	"starvet/internal/vec"
)

// gravConst is G in kpc (km/s)^2 / Msun: 4.300917e-6 (from memory;
// TestGravConst cross-checks it against the IAU 2015 nominal GM_sun).
const gravConst = 4.300917e-6

// pointMass: Phi = -GM/r (Newton).
type pointMass struct{ massMsun float64 }

func (p pointMass) Phi(x [3]float64) float64 { return -gravConst * p.massMsun / vec.Norm(x) }
func (p pointMass) Accel(x [3]float64) [3]float64 {
	r := vec.Norm(x)
	k := -gravConst * p.massMsun / (r * r * r)
	return [3]float64{k * x[0], k * x[1], k * x[2]}
}

// hernquist: Phi = -GM/(r+a) (Hernquist 1990, ApJ 356, 359, eq. 2).
type hernquist struct{ massMsun, aKpc float64 }

func (h hernquist) Phi(x [3]float64) float64 { return -gravConst * h.massMsun / (vec.Norm(x) + h.aKpc) }
func (h hernquist) Accel(x [3]float64) [3]float64 {
	r := vec.Norm(x)
	k := -gravConst * h.massMsun / ((r + h.aKpc) * (r + h.aKpc) * r)
	return [3]float64{k * x[0], k * x[1], k * x[2]}
}

// nfw: Phi = -G M_s ln(1 + r/r_s) / r with M_s = 4 pi rho_0 r_s^3 (Navarro,
// Frenk & White 1996, ApJ 462, 563, density eq. 3; potential by integration,
// e.g. Binney & Tremaine 2008, Galactic Dynamics, 2nd ed., eq. 2.67).
type nfw struct{ scaleMassMsun, rsKpc float64 }

func (n nfw) Phi(x [3]float64) float64 {
	r := vec.Norm(x)
	return -gravConst * n.scaleMassMsun * math.Log1p(r/n.rsKpc) / r
}
func (n nfw) Accel(x [3]float64) [3]float64 {
	r := vec.Norm(x)
	u := r / n.rsKpc
	// |g| = G M_s (ln(1+u) - u/(1+u)) / r^2.
	k := -gravConst * n.scaleMassMsun * (math.Log1p(u) - u/(1+u)) / (r * r * r)
	return [3]float64{k * x[0], k * x[1], k * x[2]}
}

// miyamotoNagai: Phi = -GM / sqrt(R^2 + (a + sqrt(z^2 + b^2))^2) (Miyamoto &
// Nagai 1975, PASJ 27, 533, eq. 4).
type miyamotoNagai struct{ massMsun, aKpc, bKpc float64 }

func (m miyamotoNagai) Phi(x [3]float64) float64 {
	s := m.aKpc + math.Sqrt(x[2]*x[2]+m.bKpc*m.bKpc)
	return -gravConst * m.massMsun / math.Sqrt(x[0]*x[0]+x[1]*x[1]+s*s)
}
func (m miyamotoNagai) Accel(x [3]float64) [3]float64 {
	zb := math.Sqrt(x[2]*x[2] + m.bKpc*m.bKpc)
	s := m.aKpc + zb
	d2 := x[0]*x[0] + x[1]*x[1] + s*s
	k := -gravConst * m.massMsun / (d2 * math.Sqrt(d2))
	return [3]float64{k * x[0], k * x[1], k * x[2] * s / zb}
}

type sumPotential []interface {
	Phi([3]float64) float64
	Accel([3]float64) [3]float64
}

func (s sumPotential) Phi(x [3]float64) float64 {
	var p float64
	for _, c := range s {
		p += c.Phi(x)
	}
	return p
}
func (s sumPotential) Accel(x [3]float64) [3]float64 {
	var a [3]float64
	for _, c := range s {
		g := c.Accel(x)
		a[0], a[1], a[2] = a[0]+g[0], a[1]+g[1], a[2]+g[2]
	}
	return a
}

// milkyWayTest is a Hernquist bulge plus an NFW halo tuned by hand (not a
// published fit) to a circular speed near 230 km/s and an escape speed near
// 530 km/s at R = 8.2 kpc, close to the local escape speed 533 (+54 -41)
// km/s of Piffl et al. 2014, A&A 562, A91.
func milkyWayTest() sumPotential {
	return sumPotential{hernquist{1.0e10, 0.6}, nfw{2.64e11, 5}}
}

// milkyWayBench adds a Miyamoto-Nagai disk. Disk a = 3 kpc, b = 0.28 kpc,
// M = 6.8e10 Msun and the NFW scale radius 16 kpc follow Bovy 2015, ApJS
// 216, 29, table 1 (from memory); the halo mass is set by hand.
func milkyWayBench() sumPotential {
	return sumPotential{hernquist{1.0e10, 0.6}, miyamotoNagai{6.8e10, 3, 0.28}, nfw{4.5e11, 16}}
}

func TestGravConst(t *testing.T) {
	// IAU 2015 Resolution B3: nominal GM_sun = 1.3271244e20 m^3/s^2.
	// kpc from IAU 2012 Resolution B2 (au) and IAU 2015 Resolution B2 (pc),
	// in starvet/internal/units.
	const gmSun = 1.3271244e20
	kpc := units.MPerKm * units.KpcKm // m
	got := gmSun / 1e6 / kpc          // (km/s)^2 kpc per Msun
	if rel := math.Abs(got-gravConst) / gravConst; rel > 1e-6 {
		t.Errorf("G = %.7g, computed %.7g from IAU constants (rel %.2g)", gravConst, got, rel)
	}
}

// The accelerations must be minus the gradient of Phi (central differences).
func TestTestPotentialGradients(t *testing.T) {
	for name, p := range map[string]interface {
		Phi([3]float64) float64
		Accel([3]float64) [3]float64
	}{
		"point": pointMass{1e11}, "hernquist": hernquist{1e10, 0.6}, "nfw": nfw{4.5e11, 16},
		"mn": miyamotoNagai{6.8e10, 3, 0.28}, "bench": milkyWayBench(),
	} {
		t.Run(name, func(t *testing.T) {
			x := [3]float64{-7.1, 3.2, 0.7}
			a := p.Accel(x)
			const h = 1e-5
			for i := range 3 {
				xp, xm := x, x
				xp[i] += h
				xm[i] -= h
				g := -(p.Phi(xp) - p.Phi(xm)) / (2 * h)
				if math.Abs(g-a[i]) > 1e-6*math.Max(1, math.Abs(g)) {
					t.Errorf("component %d: accel %.9g, -dPhi/dx %.9g", i, a[i], g)
				}
			}
		})
	}
}

// The tuned test potential must give what its comment claims.
func TestMilkyWayTestPotential(t *testing.T) {
	p := milkyWayTest()
	x := [3]float64{-8.2, 0, 0}
	g := p.Accel(x)
	vc := math.Sqrt(8.2 * math.Abs(g[0]))
	vesc := math.Sqrt(-2 * p.Phi(x))
	if math.Abs(vc-230) > 5 {
		t.Errorf("circular speed %.1f km/s, want 230 +- 5", vc)
	}
	// Piffl et al. 2014, A&A 562, A91: 533 (+54 -41) km/s.
	if vesc < 533-41 || vesc > 533+54 {
		t.Errorf("escape speed %.1f km/s outside 492..587", vesc)
	}
}
