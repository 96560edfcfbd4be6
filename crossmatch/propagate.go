package crossmatch

import (
	"math"

	"starvet/crossmatch/sky"
)

type astrometry = sky.Astrometry

// astro builds a sky.Astrometry from its fields in order.
func astro(raDeg, decDeg, parallaxMas, pmRAMasYr, pmDecMasYr, rvKms float64) astrometry {
	return astrometry{RADeg: raDeg, DecDeg: decDeg, ParallaxMas: parallaxMas,
		PMRAMasYr: pmRAMasYr, PMDecMasYr: pmDecMasYr, RVKms: rvKms}
}

// propagate moves a position from epoch fromJyr to toJyr with
// sky.Propagate (rigorous space motion when parallax and rv are known,
// great-circle motion by |mu| dt otherwise). Rows without a proper motion
// are not moved (ok = false).
func propagate(a astrometry, fromJyr, toJyr float64) (raDeg, decDeg float64, ok bool) {
	if math.IsNaN(a.PMRAMasYr) || math.IsNaN(a.PMDecMasYr) {
		return a.RADeg, a.DecDeg, false
	}
	b := sky.Propagate(a, fromJyr, toJyr)
	return normRA(b.RADeg), b.DecDeg, true
}
