package weigh

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"starvet/galaxy/potential"
	"starvet/internal/vec"
)

// ErrHalo is wrapped by the errors of the halo functions.
var ErrHalo = errors.New("nfw halo")

const (
	// HubbleKmsMpc is H0 in km/s/Mpc: h = 0.671, the cosmology Dutton &
	// Maccio 2014 (MNRAS 441, 3359) fitted their relation in (from
	// memory). It sets both rho_crit and the relation's mass unit 1/h Msun.
	HubbleKmsMpc = 67.1
	hubbleH      = HubbleKmsMpc / 100

	// Delta200 is the overdensity of r200 over the critical density.
	Delta200 = 200
)

// CriticalDensityMsunKpc3 is rho_crit = 3 H0^2 / (8 pi G) in Msun/kpc^3
// (Friedmann equation, common practice), with H0 in km/s/kpc and G from
// package potential.
func CriticalDensityMsunKpc3() float64 {
	h0 := HubbleKmsMpc / 1000
	return 3 * h0 * h0 / (8 * math.Pi * potential.G)
}

// Concentration200 is c200 of an NFW halo of mass m200Msun at z = 0:
// log10 c = a + b log10(M200 / (1e12 Msun/h)) with a = 0.905, b = -0.101
// (Dutton & Maccio 2014, MNRAS 441, 3359, their NFW fit for M200 with
// a = 0.520 + (0.905 - 0.520) exp(-0.617 z^1.21) and b = -0.101 + 0.026 z;
// coefficients from memory, not checked against the paper).
func Concentration200(m200Msun float64) float64 {
	return math.Pow(10, 0.905-0.101*math.Log10(m200Msun*hubbleH/1e12))
}

// nfwMu is the enclosed-mass shape of the NFW profile, M(<r) = M_s mu(r/r_s)
// with mu(u) = ln(1+u) - u/(1+u) (Navarro, Frenk & White 1996, ApJ 462,
// 563, integrated).
func nfwMu(u float64) float64 { return math.Log1p(u) - u/(1+u) }

// Halo is an NFW halo: virial mass M200 within r200 (mean density 200
// rho_crit), concentration c200 = r200/r_s, and the potential package's
// parameters M_s = 4 pi rho0 r_s^3 = M200/mu(c200) and r_s.
type Halo struct {
	M200Msun, C200, R200Kpc, MsMsun, RsKpc float64
}

// R200Kpc is the radius within which mass m200Msun has mean density
// 200 rho_crit: m = (4/3) pi r^3 200 rho_crit.
func R200Kpc(m200Msun float64) float64 {
	return math.Cbrt(3 * m200Msun / (4 * math.Pi * Delta200 * CriticalDensityMsunKpc3()))
}

// NFWHalo is the halo of virial mass m200Msun on the concentration-mass
// relation (Concentration200).
func NFWHalo(m200Msun float64) Halo {
	c := Concentration200(m200Msun)
	r200 := R200Kpc(m200Msun)
	return Halo{M200Msun: m200Msun, C200: c, R200Kpc: r200, MsMsun: m200Msun / nfwMu(c), RsKpc: r200 / c}
}

// EscapeConvention says where a star counts as escaped.
type EscapeConvention int

const (
	// EscapeTo2R200: Phi is taken as zero at twice the halo's r200
	// (Deason et al. 2019, MNRAS 485, 3514). The default.
	EscapeTo2R200 EscapeConvention = iota
	// EscapeToInfinity: Phi is zero at infinity.
	EscapeToInfinity
)

// EscapeRadiusKpc is the radius for potential.Model.EscapeSpeed under
// conv: 2 r200, or 0 for infinity.
func (h Halo) EscapeRadiusKpc(conv EscapeConvention) float64 {
	if conv == EscapeToInfinity {
		return 0
	}
	return 2 * h.R200Kpc
}

// nfwIndex returns the index of base's one NFW component.
func nfwIndex(cs []potential.Component) (int, error) {
	idx := -1
	for i, c := range cs {
		if strings.EqualFold(strings.TrimSpace(c.Kind), potential.KindNFW) {
			if idx >= 0 {
				return 0, fmt.Errorf("%w: the model has more than one NFW component (%d and %d)", ErrHalo, idx, i)
			}
			idx = i
		}
	}
	if idx < 0 {
		return 0, fmt.Errorf("%w: %w", ErrHalo, ErrNoNFW)
	}
	return idx, nil
}

// WithHalo returns base with its NFW component replaced by h; every other
// component is kept.
func WithHalo(base *potential.Model, h Halo) (*potential.Model, error) {
	cs := base.Components()
	i, err := nfwIndex(cs)
	if err != nil {
		return nil, err
	}
	cs[i] = potential.Component{Kind: potential.KindNFW, MassMsun: h.MsMsun, ScaleKpc: h.RsKpc}
	m, err := potential.New(cs)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrHalo, err)
	}
	m.Name = fmt.Sprintf("%s, NFW halo M200 = %.4g Msun", base.Name, h.M200Msun)
	m.Source = base.Source + "; halo replaced (weigh.WithHalo)"
	return m, nil
}

// HaloOf returns base's own NFW halo as M200, c200 and r200: r200 solves
// M_s mu(r/r_s) = (4/3) pi r^3 200 rho_crit. Its concentration is the
// model's, not the relation's.
func HaloOf(base *potential.Model) (Halo, error) {
	cs := base.Components()
	i, err := nfwIndex(cs)
	if err != nil {
		return Halo{}, err
	}
	ms, rs := cs[i].MassMsun, cs[i].ScaleKpc
	if rs == 0 {
		rs = cs[i].AKpc
	}
	// Mean density over 200 rho_crit, in u = r/r_s, falls monotonically
	// from +Inf (mu ~ u^2/2) to 0 (mu ~ ln u).
	target := Delta200 * CriticalDensityMsunKpc3() * 4 * math.Pi / 3 * rs * rs * rs / ms
	lnC, err := bisect(func(lnU float64) float64 {
		u := math.Exp(lnU)
		return nfwMu(u)/(u*u*u) - target
	}, math.Log(1e-3), math.Log(1e4), -1)
	if err != nil {
		return Halo{}, err
	}
	c := math.Exp(lnC)
	return Halo{M200Msun: ms * nfwMu(c), C200: c, R200Kpc: c * rs, MsMsun: ms, RsKpc: rs}, nil
}

// ScaleHalo returns base with its NFW M_s multiplied by factor and r_s
// kept.
func ScaleHalo(base *potential.Model, factor float64) (*potential.Model, error) {
	if !(factor > 0) || !vec.Finite(factor) {
		return nil, fmt.Errorf("%w: scale factor %v must be positive and finite", ErrHalo, factor)
	}
	cs := base.Components()
	i, err := nfwIndex(cs)
	if err != nil {
		return nil, err
	}
	cs[i].MassMsun *= factor
	m, err := potential.New(cs)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrHalo, err)
	}
	m.Name = fmt.Sprintf("%s, NFW M_s x %.4g", base.Name, factor)
	m.Source = base.Source + "; halo scaled (weigh.ScaleHalo)"
	return m, nil
}

// HaloEscapeSpeed is the escape speed (km/s) at xKpc of base with its halo
// replaced by h, under conv.
func HaloEscapeSpeed(base *potential.Model, h Halo, xKpc [3]float64, conv EscapeConvention) (float64, error) {
	m, err := WithHalo(base, h)
	if err != nil {
		return 0, err
	}
	return m.EscapeSpeed(xKpc, h.EscapeRadiusKpc(conv)), nil
}

// Bracket of M200 searched by M200ForEscape (ours: from a dwarf's halo to
// a group's, far beyond any Galactic estimate).
const (
	M200LoMsun = 1e10
	M200HiMsun = 1e14
)

// M200ForEscape returns the relation halo whose model (base with that
// halo) has escape speed vEscKms at sunKpc under conv. v_esc grows with
// M200 (tested), so the root is bracketed by M200LoMsun and M200HiMsun and
// found by bisection in ln M200 to 1e-12 relative (gonum has no scalar
// root finder).
func M200ForEscape(base *potential.Model, sunKpc [3]float64, vEscKms float64, conv EscapeConvention) (Halo, error) {
	if _, err := nfwIndex(base.Components()); err != nil {
		return Halo{}, err
	}
	var ferr error
	f := func(lnM float64) float64 {
		v, err := HaloEscapeSpeed(base, NFWHalo(math.Exp(lnM)), sunKpc, conv)
		if err != nil {
			ferr = err
		}
		return v - vEscKms
	}
	lnM, err := bisect(f, math.Log(M200LoMsun), math.Log(M200HiMsun), 1)
	if ferr != nil {
		return Halo{}, ferr
	}
	if err != nil {
		return Halo{}, fmt.Errorf("%w: v_esc = %v km/s: %w", ErrHalo, vEscKms, err)
	}
	return NFWHalo(math.Exp(lnM)), nil
}

// bisect finds the root of f on [lo, hi], where f has the sign of sign at
// hi and the opposite at lo, to 1e-12 of the bracket.
func bisect(f func(float64) float64, lo, hi float64, sign float64) (float64, error) {
	flo, fhi := f(lo), f(hi)
	if !(flo*sign < 0 && fhi*sign > 0) {
		return 0, fmt.Errorf("%w: root not bracketed (f = %v at %v, %v at %v)", ErrHalo, flo, lo, fhi, hi)
	}
	for range 200 {
		mid := (lo + hi) / 2
		if hi-lo <= 1e-12*math.Max(1, math.Abs(mid)) {
			break
		}
		if f(mid)*sign > 0 {
			hi = mid
		} else {
			lo = mid
		}
	}
	return (lo + hi) / 2, nil
}

// MassFromTail maps the escape-speed posterior at the Sun to M200 and to
// the circular speed at the Sun's cylindrical radius, both monotonic in
// v_esc, so the quantiles map to quantiles.
func MassFromTail(base *potential.Model, sunKpc [3]float64, vEsc Interval, conv EscapeConvention) (m200Msun, vCircKms Interval, err error) {
	R := math.Hypot(sunKpc[0], sunKpc[1])
	in := []float64{vEsc.Median, vEsc.Lo68, vEsc.Hi68, vEsc.Lo90, vEsc.Hi90}
	var m, vc [5]float64
	for i, v := range in {
		h, err := M200ForEscape(base, sunKpc, v, conv)
		if err != nil {
			return Interval{}, Interval{}, err
		}
		mod, err := WithHalo(base, h)
		if err != nil {
			return Interval{}, Interval{}, err
		}
		m[i], vc[i] = h.M200Msun, mod.CircularVelocity(R)
	}
	return Interval{m[0], m[1], m[2], m[3], m[4]}, Interval{vc[0], vc[1], vc[2], vc[3], vc[4]}, nil
}
