package potential

import (
	"errors"
	"fmt"
	"sort"
)

// ErrUnknownModel is returned (wrapped) by Builtin for a name it does not know.
var ErrUnknownModel = errors.New("unknown built-in potential model")

// DefaultModel is the built-in used when a run names none.
const DefaultModel = "bovy15-analytic"

type builtin struct {
	source     string
	components []Component
}

var builtins = map[string]builtin{
	// Bovy (2015, ApJS 216, 29), section 3.5 and Table 1: the Milky Way model
	// fitted there, with R0 = 8 kpc and v_c(R0) = 220 km/s, has a disk
	// carrying 60 per cent of the radial force at R0, a halo 35 per cent and
	// a bulge 5 per cent. Disk: Miyamoto-Nagai, a = 3 kpc, b = 0.28 kpc; its
	// mass follows from the 60 per cent share, 6.82e10 Msun (Table 1 lists
	// 6.8e10). Halo: NFW with r_s = 16 kpc; M_s = 4.37e11 Msun follows from
	// the 35 per cent share (virial mass 0.8e12 Msun in Table 1).
	// APPROXIMATION (ours): the paper's bulge is a power law rho ~ r^-1.8
	// with an exponential cut-off exp(-(r/1.9 kpc)^2). We replace it by a
	// Hernquist sphere with the same half-mass radius (1.068 kpc, computed
	// by us by quadrature, so a = 1.068/(1+sqrt 2) = 0.442 kpc) and the mass
	// that keeps the 5 per cent force share at R0 (5.01e9 Msun; Table 1:
	// 0.5e10). No central black hole.
	"bovy15-analytic": {
		source: "Bovy 2015, ApJS 216, 29 (sec. 3.5, Table 1); bulge approximated by a Hernquist sphere of equal half-mass radius and equal force share at 8 kpc",
		components: []Component{
			{Kind: KindHernquist, MassMsun: 5.01e9, ScaleKpc: 0.442},
			{Kind: KindMiyamotoNagai, MassMsun: 6.82e10, AKpc: 3.0, BKpc: 0.28},
			{Kind: KindNFW, MassMsun: 4.37e11, ScaleKpc: 16.0},
		},
	},
	// Kenyon, Bromley, Geller & Brown (2008, ApJ 680, 312), section 2: a
	// central point mass, a Hernquist bulge, a Miyamoto-Nagai disk and an
	// NFW-form halo Phi_h = -G M_h ln(1 + r/r_h)/r. Values FROM MEMORY (not
	// checked against the paper): black hole 3.5e6 Msun; bulge M = 3.76e9
	// Msun, a = 0.1 kpc; disk M = 6e10 Msun, a = 2.75 kpc, b = 0.3 kpc; halo
	// M_h = 1e12 Msun, r_h = 20 kpc. ADJUSTED (ours): with M_h = 1e12 Msun the
	// escape speed at the Sun (R = 8.122 kpc) is 651 km/s, above the measured
	// 533 +54/-41 km/s (Piffl et al. 2014, A&A 562, A91) and 528 +24/-25 km/s
	// (Deason et al. 2019, MNRAS 485, 3514); we lower M_h to 8e11 Msun, which
	// gives 592 km/s and v_c = 224 km/s (Eilers et al. 2019, ApJ 871, 120:
	// 229 km/s).
	"kenyon08-adjusted": {
		source: "Kenyon, Bromley, Geller & Brown 2008, ApJ 680, 312 (sec. 2), parameters from memory; halo mass lowered from 1e12 to 8e11 Msun to match the local escape speed",
		components: []Component{
			{Kind: KindPoint, MassMsun: 3.5e6},
			{Kind: KindHernquist, MassMsun: 3.76e9, ScaleKpc: 0.1},
			{Kind: KindMiyamotoNagai, MassMsun: 6e10, AKpc: 2.75, BKpc: 0.3},
			{Kind: KindNFW, MassMsun: 8e11, ScaleKpc: 20},
		},
	},
}

// BuiltinNames lists the built-in model names, sorted.
func BuiltinNames() []string {
	names := make([]string, 0, len(builtins))
	for n := range builtins {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// Builtin returns a fresh copy of the named built-in model.
func Builtin(name string) (*Model, error) {
	b, ok := builtins[name]
	if !ok {
		return nil, fmt.Errorf("potential model %q (known: %v): %w", name, BuiltinNames(), ErrUnknownModel)
	}
	m, err := New(b.components)
	if err != nil {
		panic(fmt.Sprintf("built-in potential %q is invalid: %v", name, err)) // programmer error
	}
	m.Name, m.Source = name, b.source
	return m, nil
}
