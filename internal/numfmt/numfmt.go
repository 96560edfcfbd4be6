// Package numfmt formats numbers for people: reasons, `why`, `rules show`
// and the report print a number with the precision it carries, while the
// ledger and CSV output keep full precision (CSV).
package numfmt

import (
	"math"
	"strconv"
)

// Missing is how a missing value (NaN) reads in text meant for people.
const Missing = "-"

// Digits of significance for the quantities people read most.
const (
	ProbDigits = 3 // match and unbound probabilities: 3.403605e-07 reads 3.4e-07
	SepDigits  = 4 // arcsecond separations: 0.630642 reads 0.6306
)

// Decimals for the kinematic summary wherever it is shown (reasons, why,
// list, report): the Monte Carlo spread of a speed is km/s or more, and of
// a distance or flight time a tenth of its unit or more.
const (
	kmsDecimals = 0 // speeds: 712.38 km/s reads 712
	kpcDecimals = 1 // Galactocentric radii: 48.937 kpc reads 48.9
	myrDecimals = 1 // flight times: 55.04 Myr reads 55.0
)

// Prob formats a probability (p_unbound, a match posterior, a containment
// level) with ProbDigits significant digits; NaN is Missing.
func Prob(p float64) string { return Sig(p, ProbDigits) }

// Sep formats an arcsecond separation with SepDigits significant digits.
func Sep(arcsec float64) string { return Sig(arcsec, SepDigits) }

// Kms formats a speed in km/s, Kpc a Galactocentric radius in kpc and Myr
// a flight time in Myr; NaN is Missing.
func Kms(v float64) string { return Fixed(v, kmsDecimals) }
func Kpc(r float64) string { return Fixed(r, kpcDecimals) }
func Myr(t float64) string { return Fixed(t, myrDecimals) }

// Fixed formats x with exactly decimals digits after the point, so a
// table column lines up; NaN is Missing.
func Fixed(x float64, decimals int) string {
	if math.IsNaN(x) {
		return Missing
	}
	return strconv.FormatFloat(x, 'f', decimals, 64)
}

// Exact formats x in the shortest form that reads back as x: a limit or
// setting a person gave reads as they wrote it. NaN is Missing.
func Exact(x float64) string {
	if math.IsNaN(x) {
		return Missing
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// CSV formats x for machine output: every digit (the shortest text that
// reads back as x), and NaN as the empty field.
func CSV(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// Sig formats x with at most n significant digits, dropping trailing zeros;
// NaN is Missing.
func Sig(x float64, n int) string {
	if math.IsNaN(x) {
		return Missing
	}
	return strconv.FormatFloat(x, 'g', n, 64)
}

// Value formats a measured value: Against with no limit.
func Value(v float64) string {
	if math.IsNaN(v) {
		return Missing
	}
	return string(AppendAgainst(nil, v, math.NaN()))
}

// AppendAgainst appends v as a person reads it beside a limit: rounded to 4
// decimals (trailing zeros dropped) in [0.01, 1e9), otherwise to
// ProbDigits significant digits. When v differs from limit but would
// print the same, it prints with every digit, so a message never reads
// "1.4 > 1.4". A NaN limit means there is none.
func AppendAgainst(b []byte, v, limit float64) []byte {
	av := math.Abs(v)
	if !(av >= 0.01 && av < 1e9) && v != 0 {
		if v != limit && !math.IsNaN(limit) &&
			strconv.FormatFloat(v, 'g', ProbDigits, 64) == strconv.FormatFloat(limit, 'g', ProbDigits, 64) {
			return strconv.AppendFloat(b, v, 'g', -1, 64)
		}
		return strconv.AppendFloat(b, v, 'g', ProbDigits, 64)
	}
	u := uint64(av*1e4 + 0.5)
	if v != limit && !math.IsNaN(limit) && u == uint64(math.Abs(limit)*1e4+0.5) && (v < 0) == (limit < 0) {
		return strconv.AppendFloat(b, v, 'g', -1, 64)
	}
	if v < 0 {
		b = append(b, '-')
	}
	b = strconv.AppendUint(b, u/10000, 10)
	frac := u % 10000
	if frac == 0 {
		return b
	}
	b = append(b, '.')
	digits := [4]byte{byte('0' + frac/1000), byte('0' + frac/100%10), byte('0' + frac/10%10), byte('0' + frac%10)}
	n := 4
	for digits[n-1] == '0' {
		n--
	}
	return append(b, digits[:n]...)
}
