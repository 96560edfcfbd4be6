// Package units is the one home of starvet's unit conversions: angles
// (degrees, radians, arcseconds, milliarcseconds, hours of right
// ascension), lengths (m, km, au, pc, kpc) and times (s, day, Julian year,
// Myr). Each constant is named FooPerBar: multiply a value in bar by it to
// get foo. Every value is exact by definition or derived from exact ones;
// each carries its source.
//
// The constants are untyped, so an expression built from them is evaluated
// exactly by the compiler and rounded once to float64.
package units
