package potential

import "starvet/internal/units"

// Physical constants of the Galaxy models; the unit conversions are in
// starvet/internal/units.
const (
	// TimeUnitMyr is the internal time unit kpc/(km/s) in Myr: KpcKm seconds.
	TimeUnitMyr = units.KpcKm / units.MyrS

	// GravSI is the Newtonian constant of gravitation, m^3 kg^-1 s^-2
	// (CODATA 2018 recommended value).
	GravSI = 6.67430e-11
	// GMSunSI is the nominal solar mass parameter, m^3 s^-2 (IAU 2015
	// Resolution B3).
	GMSunSI = 1.3271244e20
	// MSunKg is the solar mass implied by the two values above.
	MSunKg = GMSunSI / GravSI

	// G is the gravitational constant in kpc (km/s)^2 / Msun: G*Msun in
	// m^3 s^-2, divided by 1e9 m^3/km^3 and by KpcKm km/kpc. It evaluates to
	// 4.3009173e-6 (our reference notes, from memory: 4.300917e-6).
	G = GravSI * MSunKg / 1e9 / units.KpcKm
)
