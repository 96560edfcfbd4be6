package weigh

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"

	"starvet/galaxy/frames"
	"starvet/galaxy/potential"
)

// nfwMassQuad integrates the NFW density rho = rho0 / (u (1+u)^2), u = r/r_s,
// rho0 = M_s / (4 pi r_s^3) (Navarro, Frenk & White 1996, ApJ 462, 563)
// over the sphere of radius rKpc with Gauss-Legendre quadrature in ln r,
// independent of the closed form nfwMu.
func nfwMassQuad(msMsun, rsKpc, rKpc float64) float64 {
	rho0 := msMsun / (4 * math.Pi * rsKpc * rsKpc * rsKpc)
	f := func(lnR float64) float64 {
		r := math.Exp(lnR)
		u := r / rsKpc
		return 4 * math.Pi * r * r * r * rho0 / (u * (1 + u) * (1 + u))
	}
	return quad.Fixed(f, math.Log(rKpc)-40, math.Log(rKpc), 400, quad.Legendre{}, 0)
}

// TestCriticalDensity: rho_crit = 277.5 h^2 Msun/kpc^3 (2.775e11 h^2
// Msun/Mpc^3, from memory; common practice) to 0.1 per cent.
func TestCriticalDensity(t *testing.T) {
	h := HubbleKmsMpc / 100
	want := 277.5 * h * h
	if got := CriticalDensityMsunKpc3(); math.Abs(got/want-1) > 1e-3 {
		t.Errorf("rho_crit %v Msun/kpc^3, want %v", got, want)
	}
}

// TestConcentration200: the relation of Dutton & Maccio 2014 (MNRAS 441,
// 3359) at z = 0 gives c = 10^0.905 at its pivot 1e12 Msun/h and falls by
// 10^-0.101 per decade of mass; logs c200(1e12 Msun).
func TestConcentration200(t *testing.T) {
	h := HubbleKmsMpc / 100
	if got, want := Concentration200(1e12/h), math.Pow(10, 0.905); math.Abs(got/want-1) > 1e-12 {
		t.Errorf("c200 at the pivot = %v, want %v", got, want)
	}
	for _, m := range []float64{1e11, 1e12, 3e12} {
		if r := Concentration200(10*m) / Concentration200(m); math.Abs(math.Log10(r)+0.101) > 1e-12 {
			t.Errorf("c200 slope at %g: log10 ratio %v, want -0.101", m, math.Log10(r))
		}
	}
	t.Logf("c200(1e12 Msun) = %.3f (h = %.3f)", Concentration200(1e12), h)
}

// TestNFWHaloDefinition: r200 holds mean density 200 rho_crit, and the NFW
// mass within r200, integrated from the density by quadrature, is M200
// (definitions; common practice).
func TestNFWHaloDefinition(t *testing.T) {
	rhoC := CriticalDensityMsunKpc3()
	for _, m := range []float64{1e11, 8e11, 1e12, 2e12} {
		h := NFWHalo(m)
		mean := h.M200Msun / (4.0 / 3 * math.Pi * math.Pow(h.R200Kpc, 3))
		if math.Abs(mean/(200*rhoC)-1) > 1e-12 {
			t.Errorf("M200 %g: mean density %v, 200 rho_crit %v", m, mean, 200*rhoC)
		}
		if got := nfwMassQuad(h.MsMsun, h.RsKpc, h.R200Kpc); math.Abs(got/m-1) > 1e-8 {
			t.Errorf("M200 %g: quadrature mass within r200 %v", m, got)
		}
		if math.Abs(h.R200Kpc/h.RsKpc-h.C200) > 1e-12*h.C200 {
			t.Errorf("M200 %g: r200/r_s %v, c %v", m, h.R200Kpc/h.RsKpc, h.C200)
		}
	}
	h := NFWHalo(1e12)
	t.Logf("M200 1e12 Msun: c200 %.3f, r200 %.1f kpc, r_s %.2f kpc, M_s %.4g Msun", h.C200, h.R200Kpc, h.RsKpc, h.MsMsun)
}

// TestEscapeIncreasesWithM200: with the default model's bulge and disk,
// v_esc at the Sun rises with M200 on a grid from 1e10 to 1e14 Msun under
// both conventions (the monotonicity M200ForEscape and MassFromTail rely
// on).
func TestEscapeIncreasesWithM200(t *testing.T) {
	base := defaultModel(t)
	sun := SunPositionKpc(frames.DefaultSun())
	for _, conv := range []EscapeConvention{EscapeTo2R200, EscapeToInfinity} {
		prev := 0.0
		for lm := 10.0; lm <= 14.0001; lm += 0.05 {
			v, err := HaloEscapeSpeed(base, NFWHalo(math.Pow(10, lm)), sun, conv)
			if err != nil {
				t.Fatal(err)
			}
			if !(v > prev) {
				t.Fatalf("conv %d: v_esc %v at log M200 %.2f not above %v", conv, v, lm, prev)
			}
			prev = v
		}
	}
}

// TestM200ForEscapeInverts: forward map then inverse returns M200 to 1e-6.
func TestM200ForEscapeInverts(t *testing.T) {
	base := defaultModel(t)
	sun := SunPositionKpc(frames.DefaultSun())
	for _, conv := range []EscapeConvention{EscapeTo2R200, EscapeToInfinity} {
		for _, m := range []float64{3e11, 8e11, 1.3e12, 3e12} {
			v, err := HaloEscapeSpeed(base, NFWHalo(m), sun, conv)
			if err != nil {
				t.Fatal(err)
			}
			h, err := M200ForEscape(base, sun, v, conv)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(h.M200Msun/m-1) > 1e-6 {
				t.Errorf("conv %d: M200 %g -> v_esc %v -> M200 %g", conv, m, v, h.M200Msun)
			}
		}
	}
	if _, err := M200ForEscape(base, sun, 5000, EscapeTo2R200); !errors.Is(err, ErrHalo) {
		t.Errorf("v_esc beyond the bracket: %v", err)
	}
}

// TestHaloOfRoundTrip: the default model's own NFW, read back as M200 and
// c, satisfies the r200 definition (quadrature) and, put back by WithHalo,
// gives the same escape speed and the same forces (fingerprint).
func TestHaloOfRoundTrip(t *testing.T) {
	base := defaultModel(t)
	sun := SunPositionKpc(frames.DefaultSun())
	h, err := HaloOf(base)
	if err != nil {
		t.Fatal(err)
	}
	mean := nfwMassQuad(h.MsMsun, h.RsKpc, h.R200Kpc) / (4.0 / 3 * math.Pi * math.Pow(h.R200Kpc, 3))
	if math.Abs(mean/(200*CriticalDensityMsunKpc3())-1) > 1e-8 {
		t.Errorf("HaloOf r200 %v kpc: mean density %v, want 200 rho_crit", h.R200Kpc, mean)
	}
	back, err := WithHalo(base, h)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range []float64{0, h.EscapeRadiusKpc(EscapeTo2R200)} {
		if a, b := base.EscapeSpeed(sun, r), back.EscapeSpeed(sun, r); math.Abs(a-b) > 1e-9*a {
			t.Errorf("escape radius %v: %v vs %v km/s", r, a, b)
		}
	}
	if base.Fingerprint() != back.Fingerprint() {
		t.Errorf("round trip changed the model")
	}
	t.Logf("default model's halo: M200 %.4g Msun, c200 %.2f (relation at that mass: %.2f), r200 %.1f kpc", h.M200Msun, h.C200, Concentration200(h.M200Msun), h.R200Kpc)
}

// TestScaleHalo: factor 1 leaves the forces unchanged, factor 2 doubles
// M_s with r_s kept and raises the escape speed; models without an NFW
// halo are refused.
func TestScaleHalo(t *testing.T) {
	base := defaultModel(t)
	sun := SunPositionKpc(frames.DefaultSun())
	same, err := ScaleHalo(base, 1)
	if err != nil {
		t.Fatal(err)
	}
	if same.Fingerprint() != base.Fingerprint() {
		t.Errorf("factor 1 changed the model")
	}
	dbl, err := ScaleHalo(base, 2)
	if err != nil {
		t.Fatal(err)
	}
	h0, _ := HaloOf(base)
	h2, err := HaloOf(dbl)
	if err != nil {
		t.Fatal(err)
	}
	if h2.MsMsun != 2*h0.MsMsun || h2.RsKpc != h0.RsKpc {
		t.Errorf("scaled halo M_s %v r_s %v, base %v %v", h2.MsMsun, h2.RsKpc, h0.MsMsun, h0.RsKpc)
	}
	if !(dbl.EscapeSpeed(sun, 0) > base.EscapeSpeed(sun, 0)) {
		t.Errorf("doubling the halo did not raise v_esc")
	}
	noHalo, err := potential.New([]potential.Component{{Kind: potential.KindHernquist, MassMsun: 1e10, ScaleKpc: 1}})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ScaleHalo(noHalo, 2); !errors.Is(err, ErrHalo) {
		t.Errorf("no halo: %v", err)
	}
	if _, err := HaloOf(noHalo); !errors.Is(err, ErrHalo) {
		t.Errorf("no halo: %v", err)
	}
	if _, err := WithHalo(noHalo, NFWHalo(1e12)); !errors.Is(err, ErrHalo) {
		t.Errorf("no halo: %v", err)
	}
}

// TestDefaultModelEscapeSpeed: the default built-in model's escape speed
// at the Sun, to infinity and to 2 r200 of its own halo, lies within the
// span of published measurements: Piffl et al. 2014 (A&A 562, A91) 533
// +54/-41, Deason et al. 2019 (MNRAS 485, 3514) 528 +24/-25, Koppelman &
// Helmi 2021 (A&A 649, A136) 497 +- 8, Necib & Lin 2022 (ApJ 926, 189)
// 484.6 +17.8/-7.4 km/s: from the lowest lower 1-sigma bound, 477.2, to the
// highest upper one, 587 km/s.
func TestDefaultModelEscapeSpeed(t *testing.T) {
	meas := []struct{ v, lo, hi float64 }{{533, 41, 54}, {528, 25, 24}, {497, 8, 8}, {484.6, 7.4, 17.8}}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, m := range meas {
		lo, hi = min(lo, m.v-m.lo), max(hi, m.v+m.hi)
	}
	base := defaultModel(t)
	sun := SunPositionKpc(frames.DefaultSun())
	h, err := HaloOf(base)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name string
		rKpc float64
	}{{"infinity", 0}, {"2 r200", h.EscapeRadiusKpc(EscapeTo2R200)}} {
		v := base.EscapeSpeed(sun, c.rKpc)
		t.Logf("%s: v_esc at the Sun %.1f km/s (published span [%.1f, %.1f])", c.name, v, lo, hi)
		if !(v >= lo && v <= hi) {
			t.Errorf("%s: v_esc %.1f km/s outside [%.1f, %.1f]", c.name, v, lo, hi)
		}
	}
}

// TestMassFromTail: the quantiles keep their order through the monotonic
// maps, and the median halo reproduces the median escape speed.
func TestMassFromTail(t *testing.T) {
	base := defaultModel(t)
	sun := SunPositionKpc(frames.DefaultSun())
	in := Interval{Median: 530, Lo68: 505, Hi68: 556, Lo90: 490, Hi90: 575}
	for _, conv := range []EscapeConvention{EscapeTo2R200, EscapeToInfinity} {
		m, vc, err := MassFromTail(base, sun, in, conv)
		if err != nil {
			t.Fatal(err)
		}
		for _, iv := range []Interval{m, vc} {
			if !(iv.Lo90 < iv.Lo68 && iv.Lo68 < iv.Median && iv.Median < iv.Hi68 && iv.Hi68 < iv.Hi90) {
				t.Errorf("conv %d: quantiles out of order: %+v", conv, iv)
			}
		}
		v, err := HaloEscapeSpeed(base, NFWHalo(m.Median), sun, conv)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(v-in.Median) > 1e-6 {
			t.Errorf("conv %d: median halo gives v_esc %v, want %v", conv, v, in.Median)
		}
		t.Logf("conv %d: v_esc %.0f [%.0f, %.0f] -> M200 %.3g [%.3g, %.3g] Msun, v_c %.1f [%.1f, %.1f] km/s",
			conv, in.Median, in.Lo68, in.Hi68, m.Median, m.Lo68, m.Hi68, vc.Median, vc.Lo68, vc.Hi68)
	}
}

// TestNewTailStar: speeds are |v|, a draw at the Sun has scale 1 while
// one farther out has a smaller scale (v_esc falls outward in the default
// model), and the weights are 1/|v|^2 up to one constant factor (the
// inverse volume of velocity space per unit speed, 4 pi v^2: analytic).
func TestNewTailStar(t *testing.T) {
	base := defaultModel(t)
	sun := SunPositionKpc(frames.DefaultSun())
	far := [3]float64{-20, 3, 5}
	st, err := NewTailStar("x", [][3]float64{sun, far}, [][3]float64{{300, 400, 0}, {0, 0, -600}}, base, sun, 0)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(st.SpeedKms[0]-500) > 1e-12 || math.Abs(st.SpeedKms[1]-600) > 1e-12 {
		t.Errorf("speeds %v", st.SpeedKms)
	}
	if st.Scale[0] != 1 || !(st.Scale[1] < 1 && st.Scale[1] > 0) {
		t.Errorf("scales %v", st.Scale)
	}
	if r := st.Weight[0] / st.Weight[1]; math.Abs(r-(600.0*600)/(500*500)) > 1e-12 {
		t.Errorf("weights %v: ratio %v, want (600/500)^2", st.Weight, r)
	}
	if _, err := NewTailStar("y", [][3]float64{sun}, nil, base, sun, 0); !errors.Is(err, ErrTail) {
		t.Errorf("length mismatch: %v", err)
	}
}
