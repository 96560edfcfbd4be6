package potential

import "math"

// Unit constants, defined once for the whole program.
const (
	// AuM is the astronomical unit in metres (IAU 2012 Resolution B2, exact).
	AuM = 149597870700.0
	// KpcKm is one kiloparsec in km. 1 pc = 648000/pi au (IAU 2015
	// Resolution B2), so 1 kpc = 1e3 pc = 648000/pi * AuM km; this is
	// 3.0856775814913673e16 km.
	KpcKm = 648000.0 / math.Pi * AuM
	// JulianYearS is the Julian year in seconds (365.25 d of 86400 s; IAU).
	JulianYearS = 365.25 * 86400.0
	// MyrS is one mega-Julian-year in seconds.
	MyrS = 1e6 * JulianYearS

	// TimeUnitMyr is the internal time unit kpc/(km/s) in Myr: KpcKm seconds.
	TimeUnitMyr = KpcKm / MyrS

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
	G = GravSI * MSunKg / 1e9 / KpcKm
)
