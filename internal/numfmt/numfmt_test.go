package numfmt

import (
	"math"
	"testing"
)

func TestAgainst(t *testing.T) {
	nan := math.NaN()
	for _, c := range []struct {
		v, limit float64
		want     string
	}{
		{3.403605097820214e-07, 0.9, "3.4e-07"}, // the example
		{0.0001531052187248783, 0.9, "0.000153"},
		{0.630642, 1, "0.6306"},
		{48.937, 2, "48.937"},
		{1.40004, 1.4, "1.40004"}, // would read 1.4 > 1.4
		{1.4, 1.4, "1.4"},
		{-2.5, nan, "-2.5"},
		{0, 0.5, "0"},
		{2e9, nan, "2e+09"},
		{0.0012341, 0.001234, "0.0012341"}, // would read 0.00123 against 0.00123
	} {
		if got := string(AppendAgainst(nil, c.v, c.limit)); got != c.want {
			t.Errorf("AppendAgainst(%v, %v) = %q, want %q", c.v, c.limit, got, c.want)
		}
	}
}

func TestSigAndValue(t *testing.T) {
	if got := Sig(0.630642, SepDigits); got != "0.6306" {
		t.Errorf("separation: %q", got)
	}
	if got := Sig(3.403605097820214e-07, ProbDigits); got != "3.4e-07" {
		t.Errorf("probability: %q", got)
	}
	if got := Sig(1, ProbDigits); got != "1" {
		t.Errorf("probability one: %q", got)
	}
	if Sig(math.NaN(), 3) != Missing || Value(math.NaN()) != Missing {
		t.Error("NaN is not Missing")
	}
	if got := Value(29.27771); got != "29.2777" {
		t.Errorf("Value: %q", got)
	}
}

// The cases the quality messages were first written against.
func TestAgainstQualityCases(t *testing.T) {
	cases := []struct {
		v, limit float64
		want     string
	}{
		{2.31, 1.4, "2.31"},
		{1.23456789, 1.4, "1.2346"}, // rounded to 4 decimals
		{1.4000001, 1.4, "1.4000001"},
		{1.39999999, 1.4, "1.39999999"},
		{-0.25, 0, "-0.25"},
		{0, 1, "0"},
		{0.00012, 1, "0.00012"},
		{1e12, 1, "1e+12"},
		{20, 20, "20"},
	}
	for _, c := range cases {
		t.Run(c.want, func(t *testing.T) {
			if got := string(AppendAgainst(nil, c.v, c.limit)); got != c.want {
				t.Errorf("AppendAgainst(%v, %v) = %q, want %q", c.v, c.limit, got, c.want)
			}
		})
	}
}

func TestFixed(t *testing.T) {
	for _, c := range []struct {
		x        float64
		decimals int
		want     string
	}{
		{712.38, kmsDecimals, "712"},
		{48.937, kpcDecimals, "48.9"},
		{55, myrDecimals, "55.0"},
		{2019.5, 1, "2019.5"},
		{0.5, 2, "0.50"},
		{-3.25, 1, "-3.2"}, // round half to even on the binary value
		{math.NaN(), 1, Missing},
	} {
		if got := Fixed(c.x, c.decimals); got != c.want {
			t.Errorf("Fixed(%v, %d) = %q, want %q", c.x, c.decimals, got, c.want)
		}
	}
}

func TestExactAndCSV(t *testing.T) {
	for _, c := range []struct {
		x    float64
		want string
	}{
		{1.4, "1.4"},
		{0.30000000000000004, "0.30000000000000004"}, // not rounded to 0.3
		{200, "200"},
		{1e-7, "1e-07"},
		{3.403605097820214e-07, "3.403605097820214e-07"},
		{-8.122, "-8.122"},
	} {
		if got := Exact(c.x); got != c.want {
			t.Errorf("Exact(%v) = %q, want %q", c.x, got, c.want)
		}
		if got := CSV(c.x); got != c.want {
			t.Errorf("CSV(%v) = %q, want %q", c.x, got, c.want)
		}
	}
	if got := Exact(math.NaN()); got != Missing {
		t.Errorf("Exact(NaN) = %q, want Missing", got)
	}
	if got := CSV(math.NaN()); got != "" {
		t.Errorf("CSV(NaN) = %q, want the empty field", got)
	}
}

func TestQuantities(t *testing.T) {
	nan := math.NaN()
	for _, c := range []struct{ got, want string }{
		{Prob(0.99), "0.99"}, {Prob(0.9996), "1"}, {Prob(3.403605097820214e-07), "3.4e-07"}, {Prob(nan), Missing},
		{Sep(0.630642), "0.6306"}, {Sep(nan), Missing},
		{Kms(712.5001), "713"}, {Kms(-12.4), "-12"}, {Kms(nan), Missing},
		{Kpc(48.937), "48.9"}, {Kpc(nan), Missing},
		{Myr(55.04), "55.0"}, {Myr(nan), Missing},
	} {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}
