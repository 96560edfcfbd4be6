package catalog

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// TestParseFloatMatchesStrconv checks the fast path bit for bit against the
// standard library (the reference), on fixed cases and random decimals.
func TestParseFloatMatchesStrconv(t *testing.T) {
	fixed := []string{"0", "-0", "+0", "0.0", "1", "-1", "1.5", ".5", "5.", "-.25", "00012.3400",
		"123456789012345", "1234567890123456", "0.000000000000000000001", "0.0000000000000000000000001",
		"359.999999999", "-89.123456789", "1e3", "1E-3", "0x10", "", "-", ".", "+.", "1.2.3", "1,5",
		"inf", "NaN", " 1", "1 ", "--1", "9007199254740993", "0.1", "0.3", "2.675", "1.0000000000000002"}
	rng := rand.New(rand.NewPCG(7, 11))
	for range 200000 {
		digits := 1 + rng.IntN(17)
		x := rng.Float64() * math.Pow(10, float64(rng.IntN(8)))
		if rng.IntN(2) == 0 {
			x = -x
		}
		fixed = append(fixed, strconv.FormatFloat(x, 'f', rng.IntN(digits), 64))
	}
	for _, s := range fixed {
		got, gotErr := parseFloat(s)
		want, wantErr := strconv.ParseFloat(s, 64)
		if (gotErr == nil) != (wantErr == nil) {
			t.Fatalf("%q: error %v, strconv %v", s, gotErr, wantErr)
		}
		if gotErr == nil && math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Fatalf("%q: got %v (%x), strconv %v (%x)", s, got, math.Float64bits(got), want, math.Float64bits(want))
		}
	}
}
