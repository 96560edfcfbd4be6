package potential

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func mustNew(t testing.TB, cs ...Component) *Model {
	t.Helper()
	m, err := New(cs)
	if err != nil {
		t.Fatalf("New(%+v): %v", cs, err)
	}
	return m
}

func TestConstants(t *testing.T) {
	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		// Our reference notes, from memory: 4.300917e-6 kpc (km/s)^2/Msun.
		{"G", G, 4.300917e-6, 1e-6},
		// Brief / common practice: kpc/(km/s) = 977.79 Myr.
		{"time unit", TimeUnitMyr, 977.79, 1e-5},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if e := relErr(tc.got, tc.want); e > tc.tol {
				t.Errorf("got %.10g, want %.10g (rel err %.2g > %.2g)", tc.got, tc.want, e, tc.tol)
			}
		})
	}
}

func TestPointMassEscapeSpeed(t *testing.T) {
	// Textbook: v_esc = sqrt(2GM/r) for a point mass; with a finite limit
	// radius r_lim, sqrt(2GM(1/r - 1/r_lim)).
	const mass = 1e11
	m := mustNew(t, Component{Kind: KindPoint, MassMsun: mass})
	tests := []struct {
		name string
		x    [3]float64
		rLim float64
		want float64
	}{
		{"8kpc to infinity", [3]float64{-8, 0, 0}, 0, math.Sqrt(2 * G * mass / 8)},
		{"off-plane", [3]float64{3, 4, 12}, 0, math.Sqrt(2 * G * mass / 13)},
		{"limit 50kpc", [3]float64{0, 0, 10}, 50, math.Sqrt(2 * G * mass * (1.0/10 - 1.0/50))},
		{"beyond limit", [3]float64{60, 0, 0}, 50, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := m.EscapeSpeed(tc.x, tc.rLim)
			if tc.want == 0 {
				if got != 0 {
					t.Fatalf("got %v, want 0", got)
				}
				return
			}
			if e := relErr(got, tc.want); e > 1e-13 {
				t.Errorf("got %.12g, want %.12g", got, tc.want)
			}
		})
	}
}

func TestHernquist(t *testing.T) {
	// Hernquist (1990, ApJ 356, 359), eqs. 2-3: Phi = -GM/(r+a), enclosed mass
	// M(<r) = M r^2/(r+a)^2, hence v_c^2 = G M(<r)/r = GM r/(r+a)^2 and
	// v_esc = sqrt(2GM/(r+a)).
	const mass, a = 2e10, 0.7
	for _, spec := range []Component{
		{Kind: KindHernquist, MassMsun: mass, ScaleKpc: a},
		{Kind: KindHernquist, MassMsun: mass, AKpc: a},
	} {
		m := mustNew(t, spec)
		for _, r := range []float64{0.01, 0.3, 0.7, 2, 8, 40, 300} {
			t.Run("", func(t *testing.T) {
				x := [3]float64{r * 0.6, r * 0.8, 0}
				if e := relErr(m.EscapeSpeed(x, 0), math.Sqrt(2*G*mass/(r+a))); e > 1e-13 {
					t.Errorf("r=%v: escape speed rel err %.2g", r, e)
				}
				vc := m.CircularVelocity(r)
				enclosed := vc * vc * r / G
				want := mass * r * r / ((r + a) * (r + a))
				if e := relErr(enclosed, want); e > 1e-12 {
					t.Errorf("r=%v: M(<r) from v_c = %.8g, want %.8g", r, enclosed, want)
				}
			})
		}
	}
}

func TestMiyamotoNagaiLimits(t *testing.T) {
	const mass, b = 5e10, 0.4
	// a = 0 gives the Plummer sphere Phi = -GM/sqrt(r^2+b^2) (Miyamoto & Nagai
	// 1975, PASJ 27, 533, sec. 2; Plummer 1911, MNRAS 71, 460).
	plummer := mustNew(t, Component{Kind: KindMiyamotoNagai, MassMsun: mass, AKpc: 0, BKpc: b})
	disk := mustNew(t, Component{Kind: KindMiyamotoNagai, MassMsun: mass, AKpc: 3, BKpc: b})
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range 200 {
		x := [3]float64{rng.NormFloat64() * 5, rng.NormFloat64() * 5, rng.NormFloat64() * 2}
		r2 := x[0]*x[0] + x[1]*x[1] + x[2]*x[2]
		if e := relErr(plummer.Phi(x), -G*mass/math.Sqrt(r2+b*b)); e > 1e-14 {
			t.Fatalf("point %d %v: Plummer Phi rel err %.2g", i, x, e)
		}
		// Plummer force: -GM x/(r^2+b^2)^(3/2).
		acc := plummer.Accel(x)
		q := -G * mass / math.Pow(r2+b*b, 1.5)
		for k := range 3 {
			if math.Abs(acc[k]-q*x[k]) > 1e-12*math.Abs(q)*math.Sqrt(r2) {
				t.Fatalf("point %d %v: Plummer accel[%d] %v want %v", i, x, k, acc[k], q*x[k])
			}
		}
	}
	// Far away it tends to a point mass. Expanding D^2 = R^2 + (a +
	// sqrt(z^2+b^2))^2 = r^2 + 2a|z| + O(a^2, b^2) gives a leading relative
	// deviation a|z|/r^2 for Phi (twice that for |a|), first order in a/r
	// because of the |z| kink (derived here).
	for _, r := range []float64{1e3, 1e4, 1e5} {
		x := [3]float64{r * 0.48, r * 0.6, r * 0.64}
		want := -G * mass / r
		tol := 1.01*3*math.Abs(x[2])/(r*r) + 10*math.Pow(3.4/r, 2)
		if e := relErr(disk.Phi(x), want); e > tol {
			t.Errorf("r=%v: far-field Phi rel err %.2g > %.2g", r, e, tol)
		}
		acc := disk.Accel(x)
		if e := relErr(math.Sqrt(acc[0]*acc[0]+acc[1]*acc[1]+acc[2]*acc[2]), G*mass/(r*r)); e > tol*2 {
			t.Errorf("r=%v: far-field |a| rel err %.2g", r, e)
		}
	}
}

func TestNFW(t *testing.T) {
	const ms, rs = 5e11, 18.0
	m := mustNew(t, Component{Kind: KindNFW, MassMsun: ms, ScaleKpc: rs})
	gm := G * ms
	// Closed form, Navarro, Frenk & White (1996, ApJ 462, 563) density
	// integrated: Phi = -(G M_s/r) ln(1+r/r_s), enclosed mass
	// M_s [ln(1+u) - u/(1+u)], so v_c^2 = G M_s [ln(1+u) - u/(1+u)]/r.
	for _, r := range []float64{0.5, 5, 18, 60, 250} {
		u := r / rs
		if e := relErr(m.Phi([3]float64{0, 0, r}), -gm/r*math.Log(1+u)); e > 1e-14 {
			t.Errorf("r=%v: Phi rel err %.2g", r, e)
		}
		vc := m.CircularVelocity(r)
		if e := relErr(vc*vc, gm*(math.Log(1+u)-u/(1+u))/r); e > 1e-12 {
			t.Errorf("r=%v: v_c^2 rel err %.2g", r, e)
		}
	}
	// r -> 0 limits from the series (derived): Phi -> -G M_s/r_s and the
	// force magnitude -> G M_s/(2 r_s^2).
	t.Run("centre", func(t *testing.T) {
		if e := relErr(m.Phi([3]float64{}), -gm/rs); e > 1e-15 {
			t.Errorf("Phi(0) rel err %.2g", e)
		}
		a := m.Accel([3]float64{1e-9, 0, 0})
		if e := relErr(-a[0], gm/(2*rs*rs)); e > 1e-9 {
			t.Errorf("|a| near 0 rel err %.2g", e)
		}
		if a0 := m.Accel([3]float64{}); a0 != [3]float64{} {
			t.Errorf("Accel(0) = %v, want zero", a0)
		}
	})
	// The series and closed-form branches meet at u = 1e-3.
	t.Run("branch join", func(t *testing.T) {
		for _, u := range []float64{0.999e-3, 1.001e-3} {
			want := math.Log1p(u)/(u*u) - 1/(u*(1+u)) // closed form, cancellation ~1e-13
			if e := relErr(nfwForce(u), want); e > 1e-11 {
				t.Errorf("u=%v: force series %.16g vs closed %.16g", u, nfwForce(u), want)
			}
			if e := relErr(log1pOverX(u), math.Log1p(u)/u); e > 1e-15 {
				t.Errorf("u=%v: ln(1+u)/u rel err %.2g", u, e)
			}
		}
	})
}

// TestAccelIsGradient compares Accel with central differences of Phi for
// every component kind and the built-ins at random points (common practice).
func TestAccelIsGradient(t *testing.T) {
	models := map[string]*Model{
		"point":          mustNew(t, Component{Kind: KindPoint, MassMsun: 4e6}),
		"hernquist":      mustNew(t, Component{Kind: KindHernquist, MassMsun: 3.76e9, ScaleKpc: 0.1}),
		"miyamoto-nagai": mustNew(t, Component{Kind: KindMiyamotoNagai, MassMsun: 6e10, AKpc: 2.75, BKpc: 0.3}),
		"plummer-mn":     mustNew(t, Component{Kind: KindMiyamotoNagai, MassMsun: 1e10, BKpc: 0.25}),
		"nfw":            mustNew(t, Component{Kind: KindNFW, MassMsun: 1e12, AKpc: 20}),
	}
	for _, n := range BuiltinNames() {
		m, err := Builtin(n)
		if err != nil {
			t.Fatal(err)
		}
		models[n] = m
	}
	for name, m := range models {
		t.Run(name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(42, 7))
			for i := range 500 {
				// Log-uniform radius 0.01..300 kpc, isotropic direction.
				r := 0.01 * math.Pow(3e4, rng.Float64())
				z := 2*rng.Float64() - 1
				phi := 2 * math.Pi * rng.Float64()
				s := math.Sqrt(1 - z*z)
				x := [3]float64{r * s * math.Cos(phi), r * s * math.Sin(phi), r * z}
				h := 1e-5 * math.Max(r, 0.05)
				a := m.Accel(x)
				amag := math.Sqrt(a[0]*a[0] + a[1]*a[1] + a[2]*a[2])
				for k := range 3 {
					xp, xm := x, x
					xp[k] += h
					xm[k] -= h
					num := -(m.Phi(xp) - m.Phi(xm)) / (2 * h)
					// Truncation O(h^2 Phi''') plus rounding eps|Phi|/h.
					tol := 1e-7*amag + 1e-15*math.Abs(m.Phi(x))/h*10
					if math.Abs(num-a[k]) > tol {
						t.Fatalf("point %d x=%v: a[%d]=%.10g, -dPhi/dx=%.10g (tol %.2g)", i, x, k, a[k], num, tol)
					}
				}
			}
		})
	}
}

func TestBuiltinSolarNeighbourhood(t *testing.T) {
	// Sun at R = 8.122 kpc (the brief's value), 20.8 pc above the plane (from
	// memory; it barely matters). v_c within 215-245 km/s around 229 km/s
	// (Eilers et al. 2019, ApJ 871, 120); escape speed within 480-620 km/s
	// around 533 +54/-41 km/s (Piffl et al. 2014, A&A 562, A91) and
	// 528 +24/-25 km/s (Deason et al. 2019, MNRAS 485, 3514).
	sun := [3]float64{-8.122, 0, 0.0208}
	names := BuiltinNames()
	if len(names) < 2 {
		t.Fatalf("want at least two built-ins, have %v", names)
	}
	for _, name := range names {
		t.Run(name, func(t *testing.T) {
			m, err := Builtin(name)
			if err != nil {
				t.Fatal(err)
			}
			if m.Name != name || m.Source == "" {
				t.Errorf("Name %q Source %q", m.Name, m.Source)
			}
			vc := m.CircularVelocity(8.122)
			if vc < 215 || vc > 245 {
				t.Errorf("v_c(8.122 kpc) = %.1f km/s, outside 215-245", vc)
			}
			ve := m.EscapeSpeed(sun, 0)
			if ve < 480 || ve > 620 {
				t.Errorf("v_esc(Sun) = %.1f km/s, outside 480-620", ve)
			}
			t.Logf("v_c = %.1f km/s, v_esc = %.1f km/s", vc, ve)
		})
	}
	if _, err := Builtin(DefaultModel); err != nil {
		t.Errorf("DefaultModel %q: %v", DefaultModel, err)
	}
	if _, err := Builtin("no-such-model"); !errors.Is(err, ErrUnknownModel) {
		t.Errorf("unknown model: err = %v, want ErrUnknownModel", err)
	}
}

func TestNewValidation(t *testing.T) {
	ok := Component{Kind: KindHernquist, MassMsun: 1e10, ScaleKpc: 1}
	tests := []struct {
		name  string
		cs    []Component
		index int
		field string
		is    error
	}{
		{"empty", nil, -1, "", ErrNoComponent},
		{"unknown kind", []Component{ok, {Kind: "plummer", MassMsun: 1}}, 1, "kind", ErrUnknownKind},
		{"zero mass", []Component{{Kind: KindPoint}}, 0, "mass_msun", ErrBadValue},
		{"nan mass", []Component{ok, ok, {Kind: KindPoint, MassMsun: math.NaN()}}, 2, "mass_msun", ErrBadValue},
		{"negative a", []Component{{Kind: KindMiyamotoNagai, MassMsun: 1, AKpc: -1, BKpc: 1}}, 0, "a_kpc", ErrBadValue},
		{"mn zero b", []Component{ok, {Kind: KindMiyamotoNagai, MassMsun: 1, AKpc: 1}}, 1, "b_kpc", ErrBadValue},
		{"hernquist no scale", []Component{{Kind: KindHernquist, MassMsun: 1}}, 0, "a_kpc", ErrBadValue},
		{"nfw conflicting scales", []Component{{Kind: KindNFW, MassMsun: 1, ScaleKpc: 2, AKpc: 3}}, 0, "a_kpc", ErrBadValue},
		{"inf scale", []Component{{Kind: KindNFW, MassMsun: 1, ScaleKpc: math.Inf(1)}}, 0, "scale_kpc", ErrBadValue},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := New(tc.cs)
			if !errors.Is(err, tc.is) {
				t.Fatalf("err = %v, want %v", err, tc.is)
			}
			if tc.index < 0 {
				return
			}
			var ce *ComponentError
			if !errors.As(err, &ce) {
				t.Fatalf("err %T is not *ComponentError", err)
			}
			if ce.Index != tc.index || ce.Field != tc.field {
				t.Errorf("error at component %d field %q, want %d %q (%v)", ce.Index, ce.Field, tc.index, tc.field, err)
			}
		})
	}
}

func TestFingerprint(t *testing.T) {
	a := mustNew(t, Component{Kind: KindHernquist, MassMsun: 1e10, ScaleKpc: 1}, Component{Kind: KindNFW, MassMsun: 1e12, AKpc: 20})
	b := mustNew(t, Component{Kind: "nfw", MassMsun: 1e12, ScaleKpc: 20}, Component{Kind: KindHernquist, MassMsun: 1e10, AKpc: 1})
	c := mustNew(t, Component{Kind: KindHernquist, MassMsun: 1e10, ScaleKpc: 1}, Component{Kind: KindNFW, MassMsun: 1.0000001e12, AKpc: 20})
	if a.Fingerprint() != b.Fingerprint() {
		t.Errorf("same model in another order/spelling: %s vs %s", a.Fingerprint(), b.Fingerprint())
	}
	if a.Fingerprint() == c.Fingerprint() {
		t.Errorf("different mass, same fingerprint %s", a.Fingerprint())
	}
	seen := map[string]string{}
	for _, n := range BuiltinNames() {
		m, _ := Builtin(n)
		if o, dup := seen[m.Fingerprint()]; dup {
			t.Errorf("built-ins %s and %s share a fingerprint", n, o)
		}
		seen[m.Fingerprint()] = n
	}
}

func TestNoAllocs(t *testing.T) {
	m, _ := Builtin("kenyon08-adjusted")
	x := [3]float64{-8, 1, 0.3}
	var sink float64
	if n := testing.AllocsPerRun(100, func() { a := m.Accel(x); sink += a[0] + m.Phi(x) }); n != 0 {
		t.Errorf("Accel+Phi allocate %v times per call", n)
	}
	_ = sink
}

func BenchmarkAccel(b *testing.B) {
	for _, n := range BuiltinNames() {
		m, _ := Builtin(n)
		var p Potential = m
		b.Run(n, func(b *testing.B) {
			x := [3]float64{-8, 1, 0.3}
			var s float64
			for i := 0; b.Loop(); i++ {
				x[2] = float64(i&255) * 0.01
				a := p.Accel(x)
				s += a[0]
			}
			_ = s
		})
	}
}

func BenchmarkPhi(b *testing.B) {
	m, _ := Builtin(DefaultModel)
	var p Potential = m
	x := [3]float64{-8, 1, 0.3}
	var s float64
	for i := 0; b.Loop(); i++ {
		x[2] = float64(i&255) * 0.01
		s += p.Phi(x)
	}
	_ = s
}
