//go:build erfa

package sky

// Thin cgo wrappers over ERFA for the live comparison in erfa_live_test.go
// (cgo cannot be used in _test.go files). Built only with -tags erfa.

/*
#cgo LDFLAGS: -lerfa -lm
#include <erfa.h>
*/
import "C"

func erfaSeps(ra1, dec1, ra2, dec2 float64) float64 {
	return float64(C.eraSeps(C.double(ra1), C.double(dec1), C.double(ra2), C.double(dec2)))
}

func erfaPas(ra1, dec1, ra2, dec2 float64) float64 {
	return float64(C.eraPas(C.double(ra1), C.double(dec1), C.double(ra2), C.double(dec2)))
}

// erfaPmsafe calls eraPmsafe; units are ERFA's (radians, dRA/dt in rad/yr,
// parallax in arcsec, km/s, two-part Julian Dates).
func erfaPmsafe(ra, dec, pmr, pmd, px, rv, ep1a, ep1b, ep2a, ep2b float64) (ra2, dec2, pmr2, pmd2, px2, rv2 float64, status int) {
	var a, d, pr, pd, p, v C.double
	j := C.eraPmsafe(C.double(ra), C.double(dec), C.double(pmr), C.double(pmd), C.double(px), C.double(rv),
		C.double(ep1a), C.double(ep1b), C.double(ep2a), C.double(ep2b), &a, &d, &pr, &pd, &p, &v)
	return float64(a), float64(d), float64(pr), float64(pd), float64(p), float64(v), int(j)
}
