package potential

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"starvet/internal/fingerprint"
	"starvet/internal/vec"
)

// Component kind names accepted in Component.Kind.
const (
	KindPoint         = "point"
	KindHernquist     = "hernquist"
	KindMiyamotoNagai = "miyamoto-nagai"
	KindNFW           = "nfw"
)

// Sentinel errors; wrapped by *ComponentError.
var (
	ErrUnknownKind = errors.New("unknown component kind")
	ErrBadValue    = errors.New("invalid component parameter")
	ErrNoComponent = errors.New("model has no components")
)

// Component describes one mass component. MassMsun is the total mass, except
// for "nfw" where it is the characteristic mass M_s = 4 pi rho0 r_s^3.
// "hernquist" and "nfw" take their scale radius from ScaleKpc or, if that is
// zero, from AKpc; "miyamoto-nagai" uses AKpc (radial, >= 0) and BKpc
// (vertical, > 0); "point" uses only the mass.
type Component struct {
	Kind     string  `toml:"kind"`
	MassMsun float64 `toml:"mass_msun"`
	ScaleKpc float64 `toml:"scale_kpc"`
	AKpc     float64 `toml:"a_kpc"`
	BKpc     float64 `toml:"b_kpc"`
}

// ComponentError reports an invalid component by index and field name (the
// TOML key).
type ComponentError struct {
	Index int
	Field string
	Err   error
	Msg   string
}

func (e *ComponentError) Error() string {
	if e.Field == "" {
		return fmt.Sprintf("potential component %d: %s", e.Index, e.Msg)
	}
	return fmt.Sprintf("potential component %d, field %s: %s", e.Index, e.Field, e.Msg)
}

func (e *ComponentError) Unwrap() error { return e.Err }

type kind uint8

const (
	kPoint kind = iota
	kHernquist
	kMN
	kNFW
)

// comp is the flat, precomputed form used in the hot loops.
type comp struct {
	k  kind
	gm float64 // G*M, kpc (km/s)^2
	a  float64 // scale (hernquist, nfw) or radial scale (MN), kpc
	b2 float64 // MN: b^2, kpc^2
}

// Model is a sum of components. It implements Potential; the zero value is
// not usable, build it with New or Builtin. Methods are safe for concurrent
// use.
type Model struct {
	// Name labels the model (a built-in name, or set by the caller).
	Name string
	// Source cites where the parameters come from.
	Source string

	components []Component
	comps      []comp
	fp         string
}

// New validates the components and builds a model.
func New(components []Component) (*Model, error) {
	if len(components) == 0 {
		return nil, ErrNoComponent
	}
	m := &Model{components: append([]Component(nil), components...)}
	for i, c := range components {
		cc, err := compile(i, c)
		if err != nil {
			return nil, err
		}
		m.comps = append(m.comps, cc)
	}
	m.fp = componentsFingerprint(m.comps)
	return m, nil
}

func bad(i int, field, format string, args ...any) error {
	return &ComponentError{Index: i, Field: field, Err: ErrBadValue, Msg: fmt.Sprintf(format, args...)}
}

func compile(i int, c Component) (comp, error) {
	if !vec.Finite(c.MassMsun) || c.MassMsun <= 0 {
		return comp{}, bad(i, "mass_msun", "must be a positive finite mass in Msun, got %v", c.MassMsun)
	}
	for _, f := range []struct {
		name string
		v    float64
	}{{"scale_kpc", c.ScaleKpc}, {"a_kpc", c.AKpc}, {"b_kpc", c.BKpc}} {
		if !vec.Finite(f.v) || f.v < 0 {
			return comp{}, bad(i, f.name, "must be a finite length >= 0 in kpc, got %v", f.v)
		}
	}
	gm := G * c.MassMsun
	switch strings.ToLower(strings.TrimSpace(c.Kind)) {
	case KindPoint:
		return comp{k: kPoint, gm: gm}, nil
	case KindHernquist, KindNFW:
		s, field := c.ScaleKpc, "scale_kpc"
		if s == 0 {
			s, field = c.AKpc, "a_kpc"
		}
		if s <= 0 {
			return comp{}, bad(i, field, "%s needs a positive scale radius (scale_kpc or a_kpc)", c.Kind)
		}
		if c.ScaleKpc != 0 && c.AKpc != 0 && c.ScaleKpc != c.AKpc {
			return comp{}, bad(i, "a_kpc", "conflicts with scale_kpc (%v vs %v); give one", c.AKpc, c.ScaleKpc)
		}
		k := kHernquist
		if strings.ToLower(strings.TrimSpace(c.Kind)) == KindNFW {
			k = kNFW
		}
		return comp{k: k, gm: gm, a: s}, nil
	case KindMiyamotoNagai:
		if c.BKpc <= 0 {
			return comp{}, bad(i, "b_kpc", "miyamoto-nagai needs b_kpc > 0, got %v", c.BKpc)
		}
		if c.ScaleKpc != 0 {
			return comp{}, bad(i, "scale_kpc", "not used by miyamoto-nagai; give a_kpc and b_kpc")
		}
		return comp{k: kMN, gm: gm, a: c.AKpc, b2: c.BKpc * c.BKpc}, nil
	default:
		return comp{}, &ComponentError{Index: i, Field: "kind", Err: ErrUnknownKind,
			Msg: fmt.Sprintf("unknown kind %q (want point, hernquist, miyamoto-nagai or nfw)", c.Kind)}
	}
}

// Components returns a copy of the components the model was built from.
func (m *Model) Components() []Component { return append([]Component(nil), m.components...) }

// Fingerprint is a canonical hash of the components: order-independent,
// insensitive to Name/Source and to whether a scale was given as ScaleKpc or
// AKpc. Two models with equal fingerprints give identical forces.
func (m *Model) Fingerprint() string { return m.fp }

func componentsFingerprint(cs []comp) string {
	names := [...]string{kPoint: KindPoint, kHernquist: KindHernquist, kMN: KindMiyamotoNagai, kNFW: KindNFW}
	parts := make([]string, len(cs))
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	for i, c := range cs {
		// Store the inputs (mass and lengths) rather than derived G*M so the
		// hash is stable if G were ever refined.
		p := names[c.k] + ";m=" + f(c.gm/G)
		switch c.k {
		case kHernquist, kNFW:
			p += ";s=" + f(c.a)
		case kMN:
			p += ";a=" + f(c.a) + ";b=" + f(math.Sqrt(c.b2))
		}
		parts[i] = p
	}
	sort.Strings(parts)
	return fingerprint.Hex([]byte("starvet-potential-v1\n"+strings.Join(parts, "\n")), 16)
}

// Phi returns the potential in (km/s)^2 at x (kpc). A point mass gives -Inf
// at its own position.
func (m *Model) Phi(x [3]float64) float64 {
	R2 := x[0]*x[0] + x[1]*x[1]
	z2 := x[2] * x[2]
	r := math.Sqrt(R2 + z2)
	var phi float64
	for i := range m.comps {
		c := &m.comps[i]
		switch c.k {
		case kPoint:
			// Phi = -GM/r.
			phi -= c.gm / r
		case kHernquist:
			// Hernquist (1990, ApJ 356, 359), eq. 2: Phi = -GM/(r+a).
			phi -= c.gm / (r + c.a)
		case kMN:
			// Miyamoto & Nagai (1975, PASJ 27, 533), eq. 4:
			// Phi = -GM / sqrt(R^2 + (a + sqrt(z^2+b^2))^2).
			s := c.a + math.Sqrt(z2+c.b2)
			phi -= c.gm / math.Sqrt(R2+s*s)
		case kNFW:
			// Navarro, Frenk & White (1996, ApJ 462, 563) density; potential
			// Phi = -(G M_s / r) ln(1 + r/r_s) = -(G M_s/r_s) ln(1+u)/u.
			phi -= c.gm / c.a * log1pOverX(r/c.a)
		}
	}
	return phi
}

// log1pOverX returns ln(1+u)/u, with its Taylor series near u = 0
// (ln(1+u) = u - u^2/2 + u^3/3 - ...; common practice).
func log1pOverX(u float64) float64 {
	if u < 1e-3 {
		return 1 - u*(1.0/2-u*(1.0/3-u*(1.0/4-u/5)))
	}
	return math.Log1p(u) / u
}

// nfwForce returns g(u) = ln(1+u)/u^2 - 1/(u(1+u)), the NFW radial force in
// units of G M_s / r_s^2. For small u both terms are ~1/u and cancel; the
// series g = sum_n (-1)^n (n+1)/(n+2) u^n follows from the one of ln(1+u)
// (derived here; checked against the closed form in tests).
func nfwForce(u float64) float64 {
	if u < 1e-3 {
		return 1.0/2 - u*(2.0/3-u*(3.0/4-u*(4.0/5-u*5.0/6)))
	}
	return math.Log1p(u)/(u*u) - 1/(u*(1+u))
}

// Accel returns the acceleration -grad Phi in (km/s)^2/kpc at x (kpc). At the
// exact centre, where the force of a cusped component has no direction, the
// radial components contribute zero.
func (m *Model) Accel(x [3]float64) [3]float64 {
	R2 := x[0]*x[0] + x[1]*x[1]
	z2 := x[2] * x[2]
	r2 := R2 + z2
	r := math.Sqrt(r2)
	// Spherical components add f * x with f = -(dPhi/dr)/r.
	var fs, fR, fz float64
	for i := range m.comps {
		c := &m.comps[i]
		switch c.k {
		case kPoint:
			if r > 0 {
				fs -= c.gm / (r2 * r)
			}
		case kHernquist:
			if r > 0 {
				d := r + c.a
				fs -= c.gm / (r * d * d)
			}
		case kMN:
			zeta := math.Sqrt(z2 + c.b2)
			s := c.a + zeta
			d2 := R2 + s*s
			q := c.gm / (d2 * math.Sqrt(d2))
			fR -= q
			fz -= q * s / zeta
		case kNFW:
			if r > 0 {
				u := r / c.a
				fs -= c.gm / (c.a * c.a) * nfwForce(u) / r
			}
		}
	}
	fR += fs
	fz += fs
	return [3]float64{fR * x[0], fR * x[1], fz * x[2]}
}

// CircularVelocity returns v_c(R) = sqrt(R dPhi/dR) in km/s in the plane
// z = 0 at cylindrical radius RKpc.
func (m *Model) CircularVelocity(RKpc float64) float64 {
	a := m.Accel([3]float64{RKpc, 0, 0})
	v2 := -RKpc * a[0]
	if v2 <= 0 {
		return 0
	}
	return math.Sqrt(v2)
}

// EscapeSpeed returns sqrt(2 (Phi(r_lim) - Phi(x))) in km/s. With
// escapeRadiusKpc <= 0 the limit is infinity, where every component's Phi
// tends to 0. Otherwise Phi(r_lim) is taken at spherical radius
// escapeRadiusKpc along the same direction as x (the model is not spherical,
// so the direction matters; the ray through x is the path a star would
// leave by); at the exact centre the direction is +x. Returns 0 where x lies
// at or beyond r_lim.
func (m *Model) EscapeSpeed(x [3]float64, escapeRadiusKpc float64) float64 {
	phi := m.Phi(x)
	var lim float64
	if escapeRadiusKpc > 0 {
		r := math.Sqrt(x[0]*x[0] + x[1]*x[1] + x[2]*x[2])
		var xl [3]float64
		if r == 0 {
			xl = [3]float64{escapeRadiusKpc, 0, 0}
		} else {
			s := escapeRadiusKpc / r
			xl = [3]float64{x[0] * s, x[1] * s, x[2] * s}
		}
		lim = m.Phi(xl)
	}
	d := lim - phi
	if !(d > 0) {
		return 0
	}
	return math.Sqrt(2 * d)
}
