// Package potential provides static Galactic mass models: analytic
// components (point mass, Hernquist sphere, Miyamoto-Nagai disk, NFW halo)
// summed into a Model, plus named built-in models from published studies.
//
// In: component parameters (masses in Msun, lengths in kpc) or a built-in
// name. Out: the potential Phi in (km/s)^2 and the acceleration -grad Phi in
// (km/s)^2/kpc at a Galactocentric Cartesian position in kpc (x from the
// Sun's projection toward the centre, y along rotation, z toward the north
// Galactic pole); circular speed v_c(R) and escape speed in km/s. With the
// internal time unit kpc/(km/s) (TimeUnitMyr = 977.79 Myr) the equations of
// motion dx/dt = v, dv/dt = Accel(x) need no further constants. G is
// defined once in units.go; unit conversions come from starvet/internal/units.
//
// Model.Phi and Model.Accel do not allocate and switch over a flat slice of
// components, since orbit integration calls them 1e8-1e9 times per run.
package potential
