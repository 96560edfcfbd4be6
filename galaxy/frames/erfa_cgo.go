//go:build erfa

package frames

// Thin cgo wrappers over ERFA for erfa_live_test.go (cgo cannot be used in
// _test.go files). Built only with -tags erfa.

/*
#cgo LDFLAGS: -lerfa -lm
#include <erfa.h>
*/
import "C"

func erfaIcrs2g(ra, dec float64) (l, b float64) {
	var cl, cb C.double
	C.eraIcrs2g(C.double(ra), C.double(dec), &cl, &cb)
	return float64(cl), float64(cb)
}

func erfaG2icrs(l, b float64) (ra, dec float64) {
	var cr, cd C.double
	C.eraG2icrs(C.double(l), C.double(b), &cr, &cd)
	return float64(cr), float64(cd)
}
