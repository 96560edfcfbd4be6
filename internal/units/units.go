package units

import "math"

// Angles (definitions of the units; common practice).
const (
	RadPerDeg    = math.Pi / 180
	DegPerRad    = 180 / math.Pi
	DegPerHour   = 15.0   // 24 h of right ascension = 360 deg
	ArcsecPerDeg = 3600.0 // 1 deg = 60 arcmin = 3600 arcsec
	MasPerArcsec = 1000.0 // 1 arcsec = 1000 mas
	MasPerDeg    = 3600e3 // ArcsecPerDeg * MasPerArcsec
	MuasPerMas   = 1000.0 // 1 mas = 1000 microarcsec
	MuasPerDeg   = 3600e6 // MasPerDeg * MuasPerMas
	RadPerArcsec = RadPerDeg / ArcsecPerDeg
	RadPerMas    = RadPerDeg / MasPerDeg
	MuasPerRad   = DegPerRad * MuasPerDeg
)

// Lengths.
const (
	MPerKm = 1e3  // SI prefix
	KmPerM = 1e-3 // SI prefix
	// AuM is the astronomical unit in metres (IAU 2012 Resolution B2, exact).
	AuM  = 149597870700.0
	AuKm = AuM / MPerKm
	// PcAu is the parsec in au: 648000/pi (IAU 2015 Resolution B2).
	PcAu     = 648000.0 / math.Pi
	PcPerKpc = 1000.0 // SI prefix
	KpcPerPc = 1e-3   // SI prefix
	// KpcKm is one kiloparsec in km: 1e3 pc = 1e3 PcAu AuKm = PcAu AuM km,
	// 3.0856775814913673e16 km.
	KpcKm = PcAu * AuM
)

// Times (IAU: the Julian year is 365.25 days of 86400 SI seconds).
const (
	DaySec        = 86400.0
	JulianYearDay = 365.25
	JulianYearS   = JulianYearDay * DaySec
	MyrS          = 1e6 * JulianYearS
)

// KmsPerMasYrKpc is the tangential speed in km/s of 1 mas/yr at 1 kpc:
// 1 mas at 1 kpc subtends 1 au, so this is one au per Julian year,
// 4.740470463533349 (from AuKm and JulianYearS above).
const KmsPerMasYrKpc = AuKm / JulianYearS
