package crossmatch

import (
	"math"
	"os"
	"strconv"
	"testing"

	"starvet/catalog"
	"starvet/internal/units"
)

// testSeed returns the seed for a randomised test: def, or STARVET_SEED
// when set. It is logged so a failure can be replayed.
func testSeed(t testing.TB, def uint64) uint64 {
	t.Helper()
	seed := def
	if s := os.Getenv("STARVET_SEED"); s != "" {
		v, err := strconv.ParseUint(s, 10, 64)
		if err != nil {
			t.Fatalf("STARVET_SEED=%q: %v", s, err)
		}
		seed = v
	}
	t.Logf("seed %d (override with STARVET_SEED)", seed)
	return seed
}

// src is one test source; NaN fields are missing.
type src struct {
	id                  string
	raDeg, decDeg       float64
	raErrMas, decErrMas float64
	pmRA, pmDec         float64 // mas/yr
	pmRAErr, pmDecErr   float64 // mas/yr
	parallaxMas, rvKms  float64
}

func newSrc(id string, ra, dec, errMas float64) src {
	nan := math.NaN()
	return src{id: id, raDeg: ra, decDeg: dec, raErrMas: errMas, decErrMas: errMas,
		pmRA: nan, pmDec: nan, pmRAErr: nan, pmDecErr: nan, parallaxMas: nan, rvKms: nan}
}

// table builds a catalog with every column the matcher reads; lines are
// row+2 (a header on line 1).
func table(name string, epochJyr float64, rows []src) *catalog.Table {
	t := &catalog.Table{Name: name, EpochJyr: epochJyr}
	fields := []catalog.Field{catalog.RA, catalog.Dec, catalog.RAErr, catalog.DecErr,
		catalog.PMRA, catalog.PMDec, catalog.PMRAErr, catalog.PMDecErr, catalog.Parallax, catalog.RV}
	for _, f := range fields {
		t.Cols[f] = make([]float64, len(rows))
	}
	for i, r := range rows {
		t.IDs = append(t.IDs, r.id)
		t.Lines = append(t.Lines, i+2)
		vals := []float64{r.raDeg, r.decDeg, r.raErrMas, r.decErrMas, r.pmRA, r.pmDec,
			r.pmRAErr, r.pmDecErr, r.parallaxMas, r.rvKms}
		for k, f := range fields {
			t.Cols[f][i] = vals[k]
		}
	}
	return t
}

// offset returns the point at angular distance sepArcsec from (ra, dec) in
// direction bearing (radians, east of north), on the sphere (exact
// spherical-triangle formulas, from memory: the "destination point" of
// navigation).
func offset(raDeg, decDeg, sepArcsec, bearing float64) (float64, float64) {
	d := sepArcsec * units.RadPerArcsec
	dec1 := decDeg * units.RadPerDeg
	sd, cd := math.Sincos(dec1)
	sD, cD := math.Sincos(d)
	dec2 := math.Asin(sd*cD + cd*sD*math.Cos(bearing))
	dra := math.Atan2(math.Sin(bearing)*sD*cd, cD-sd*math.Sin(dec2))
	return normRA(raDeg + dra*units.DegPerRad), dec2 * units.DegPerRad
}

// sameFloat is == that also equates two NaNs.
func sameFloat(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }
