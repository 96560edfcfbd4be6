package catalog

import "testing"

func TestDistanceFromModulusZeroError(t *testing.T) {
	d, e := DistanceFromModulus(10, 0)
	// mu = 10 -> 10^3 pc = 1 kpc (definition of the distance modulus).
	if d != 1 || e != 0 {
		t.Errorf("got %g, %g", d, e)
	}
}
