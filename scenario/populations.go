package scenario

import (
	"fmt"
	"math"
	"math/rand/v2"

	"starvet/galaxy/frames"
	"starvet/galaxy/orbit"
	"starvet/galaxy/weigh"
	"starvet/internal/units"
)

// Population labels written to truth.csv.
const (
	PopThinDisk    = "thin_disk"
	PopThickDisk   = "thick_disk"
	PopHalo        = "halo"
	PopGCEjectee   = "gc_ejectee"
	PopDiskRunaway = "disk_runaway"
	PopHaloFast    = "halo_fast"
)

// Trap labels written to truth.csv. Every trap but TrapHighPM is an
// artefact: the star must not end "unbound".
const (
	TrapBinary    = "binary"     // spoilt fit fakes a large proper motion
	TrapDuplicate = "duplicate"  // two rows for one source
	TrapRVOutlier = "rv_outlier" // rv wrong by hundreds of km/s, low S/N
	TrapCrowded   = "crowded"    // spectroscopic counterpart has a neighbour
	TrapHighPM    = "high_pm"    // real star, matches only after propagation
	TrapBadValue  = "bad_value"  // row with an impossible value
)

// OriginHalo is the true origin, written to truth.csv, of the halo stars.
// The other true origins are the back-trace's own words (orbit.OriginGC,
// orbit.OriginDisk); no trace gives this one.
const OriginHalo orbit.Origin = "halo"

// star is one source of the primary catalog, with its true phase-space
// coordinates and what was observed of it.
type star struct {
	id        string
	pop       string
	trap      string
	artefact  bool
	origin    orbit.Origin
	flightMyr float64 // NaN unless ejected or kicked

	posKpc, velKms [3]float64 // true, Galactocentric
	// launchPos/launchVel: state at ejection or kick (zero otherwise).
	launchPos, launchVel [3]float64
	absMag, color        float64

	// True observables at the astrometric epoch.
	raDeg, decDeg, distKpc float64
	pmRA, pmDec, rvKms     float64
	mag                    float64
	inFootprint            bool

	// fakePM is added to the observed proper motion (binaries, the
	// spurious twin of a duplicate), mas/yr.
	fakePM [2]float64
	// twinOf is set on the spurious second row of a duplicated source;
	// offsetMas is its offset (east, north) from the real one.
	twinOf    *star
	offsetMas [2]float64

	astro astroRow
	spec  *specRow // nil: no spectrum
	// specRelease is the release of the spectroscopic catalog in which the
	// spectrum first appears.
	specRelease int
	phot        *photRow
	bad         *badCell
	revised     int // release of the last astrometric revision (1 = none)
}

// sampler draws stars from the populations of a galaxy.
type sampler struct {
	g   *galaxy
	rng *rand.Rand
}

const maxTries = 100000

func (s *sampler) uniform(a, b float64) float64 { return a + (b-a)*s.rng.Float64() }

// isotropic returns a random unit vector.
func (s *sampler) isotropic() [3]float64 {
	z := 2*s.rng.Float64() - 1
	phi := 2 * math.Pi * s.rng.Float64()
	r := math.Sqrt(1 - z*z)
	return [3]float64{r * math.Cos(phi), r * math.Sin(phi), z}
}

// finish fills the observables of st from its phase-space coordinates and
// reports whether it is within the magnitude limits.
func (s *sampler) finish(st *star) bool {
	ra, dec, d, pmra, pmdec, rv := fromGalactocentric(s.g.sun, st.posKpc, st.velKms)
	st.raDeg, st.decDeg, st.distKpc = ra/units.RadPerDeg, dec/units.RadPerDeg, d
	st.pmRA, st.pmDec, st.rvKms = pmra, pmdec, rv
	// Distance modulus mu = 5 log10(d / 10 pc) = 5 log10(d_kpc) + 10
	// (definition).
	st.mag = st.absMag + 5*math.Log10(d) + 10
	st.inFootprint = inFootprint(st.raDeg, st.decDeg)
	return st.mag < magLimitAstrometry && st.mag > magBrightLimit
}

func inFootprint(raDeg, decDeg float64) bool {
	if decDeg <= footprintMinDecDeg {
		return false
	}
	_, b := frames.ICRSToGalactic(raDeg*units.RadPerDeg, decDeg*units.RadPerDeg)
	return math.Abs(b)/units.RadPerDeg > footprintMinAbsBDeg
}

// diskParams describe one disk component. The values are those the brief
// asks for (scale length 2.6 kpc; scale heights 0.3 and 0.9 kpc;
// dispersions (35,25,20) and (60,45,40) km/s), close to the thin and thick
// disks of Bland-Hawthorn & Gerhard (2016, ARA&A 54, 529, sec. 6).
type diskParams struct {
	pop                  string
	scaleLenKpc          float64
	scaleHeightKpc       float64
	driftKms             float64 // asymmetric drift
	sigR, sigPhi, sigZ   float64 // km/s
	absMagMean, absMagSD float64
	colorMean, colorSD   float64
}

var (
	thinDisk  = diskParams{PopThinDisk, 2.6, 0.3, 10, 35, 25, 20, 4.0, 1.8, 0.9, 0.3}
	thickDisk = diskParams{PopThickDisk, 2.6, 0.9, 40, 60, 45, 40, 4.2, 1.2, 0.95, 0.25}
)

// diskPosition draws a position from a double-exponential disk: surface
// density ∝ exp(-R/h) (so p(R) ∝ R exp(-R/h), a Gamma(2, h) law) and
// density ∝ exp(-|z|/h_z), with R < rMax.
func (s *sampler) diskPosition(hR, hz, rMin, rMax float64) [3]float64 {
	for {
		r := -hR * math.Log((1-s.rng.Float64())*(1-s.rng.Float64()))
		if r < rMin || r > rMax {
			continue
		}
		phi := 2 * math.Pi * s.rng.Float64()
		z := hz * s.rng.ExpFloat64()
		if s.rng.IntN(2) == 0 {
			z = -z
		}
		return [3]float64{r * math.Cos(phi), r * math.Sin(phi), z}
	}
}

// rotation returns the unit vectors e_R and e_phi at x; e_phi points along
// Galactic rotation (+y at the Sun, which is at x < 0).
func rotation(x [3]float64) (eR, ePhi [3]float64) {
	r := math.Hypot(x[0], x[1])
	if r == 0 {
		return [3]float64{1, 0, 0}, [3]float64{0, 1, 0}
	}
	return [3]float64{x[0] / r, x[1] / r, 0}, [3]float64{x[1] / r, -x[0] / r, 0}
}

func (s *sampler) diskStar(p diskParams) *star {
	x := s.diskPosition(p.scaleLenKpc, p.scaleHeightKpc, 0.2, 25)
	return &star{pop: p.pop, origin: orbit.OriginDisk, flightMyr: math.NaN(), posKpc: x, velKms: s.diskVelocity(p, x),
		absMag: clamp(p.absMagMean+p.absMagSD*s.rng.NormFloat64(), -3, 12),
		color:  p.colorMean + p.colorSD*s.rng.NormFloat64()}
}

// diskVelocity draws a velocity at x: rotation at the model's circular
// speed less the asymmetric drift, plus Gaussian dispersions in (R, phi, z).
func (s *sampler) diskVelocity(p diskParams, x [3]float64) [3]float64 {
	rc := math.Hypot(x[0], x[1])
	eR, ePhi := rotation(x)
	vPhi := s.g.vcirc(rc) - p.driftKms + p.sigPhi*s.rng.NormFloat64()
	vR := p.sigR * s.rng.NormFloat64()
	vZ := p.sigZ * s.rng.NormFloat64()
	var v [3]float64
	for i := range 3 {
		v[i] = vR*eR[i] + vPhi*ePhi[i]
	}
	v[2] += vZ
	return v
}

// haloRadius draws r from density ∝ r^-3.5 between rMin and rMax (kpc):
// p(r) ∝ r^-1.5, inverted analytically.
func (s *sampler) haloRadius(rMin, rMax float64) float64 {
	a, b := 1/math.Sqrt(rMin), 1/math.Sqrt(rMax)
	u := a - s.rng.Float64()*(a-b)
	return 1 / (u * u)
}

// The halo's speed law, in units of the local escape speed f = v / v_esc(x)
// of the simulated Galaxy (its halo scaled by Config.HaloScale), invented
// for the demo so that the tail has exactly the form the velocity-tail
// method fits: p(f) ∝ f^2 below haloBulkEdge (an isotropic velocity
// distribution of finite density at v = 0), and above it the tail law
// p(f) ∝ (1 - f)^k, k = haloTailIndex (Leonard & Tremaine 1990, ApJ 353,
// 486), the two continuous at haloBulkEdge. f0 = 0.3 keeps the edge below
// v_min = 300 km/s wherever a halo star can be: the fastest escape speed
// at the halo's inner radius (1 kpc) is 810 km/s at HaloScale 2, and 0.3
// times it is 243 km/s. Its mean speed at the Sun, 0.36 v_esc = 185 km/s
// in the default model, is that of an isotropic normal of 116 km/s per
// axis, close to the stellar halo's dispersion (~120 km/s, Bland-Hawthorn
// & Gerhard 2016, ARA&A 54, 529, sec. 7).
const haloBulkEdge = 0.3

// haloTailIndex is k in the speed distribution of the halo's high-velocity
// tail, f(v) ∝ (v_esc - v)^k (Leonard & Tremaine 1990, ApJ 353, 486; Piffl
// et al. 2014, A&A 562, A91 fit k between about 2.3 and 3.7, from memory).
const haloTailIndex = 3.0

// haloFraction draws f = v / v_esc from the halo's speed law above fMin
// (0: the whole law; fMin >= haloBulkEdge: the tail law conditioned on
// f >= fMin), by inverting each piece's CDF.
func (s *sampler) haloFraction(fMin float64) float64 {
	const f0, k1 = haloBulkEdge, haloTailIndex + 1
	if fMin < f0 {
		// Masses of the two pieces with p(f0) = f0^2 on both sides:
		// bulk f0^3/3, tail f0^2 (1 - f0)/(k + 1).
		bulk, tail := f0*f0*f0/3, f0*f0*(1-f0)/k1
		if s.rng.Float64()*(bulk+tail) < bulk {
			return f0 * math.Cbrt(s.rng.Float64())
		}
		fMin = f0
	}
	return 1 - (1-fMin)*math.Pow(s.rng.Float64(), 1/k1)
}

// haloVelocity draws a velocity at x from the halo's speed law above
// fMin, in an isotropic direction.
func (s *sampler) haloVelocity(x [3]float64, fMin float64) [3]float64 {
	sp := s.haloFraction(fMin) * s.g.vesc(x)
	e := s.isotropic()
	return [3]float64{sp * e[0], sp * e[1], sp * e[2]}
}

func (s *sampler) haloStar() *star {
	r := s.haloRadius(1, 60)
	d := s.isotropic()
	x := [3]float64{r * d[0], r * d[1], r * d[2]}
	m := 4.8 + 0.8*s.rng.NormFloat64() // dwarfs
	if s.rng.Float64() < 0.3 {
		m = 0.6 + 0.8*s.rng.NormFloat64() // giants
	}
	return &star{pop: PopHalo, origin: OriginHalo, flightMyr: math.NaN(), posKpc: x, velKms: s.haloVelocity(x, 0),
		absMag: m, color: 0.75 + 0.2*s.rng.NormFloat64()}
}

// background draws one visible star of the smooth Galaxy. The mix of the
// magnitude-limited sample is set directly: 75% thin disk, 18% thick disk,
// 7% halo (invented, of the order seen in deep surveys).
func (s *sampler) background() (*star, error) {
	u := s.rng.Float64()
	for range maxTries {
		var st *star
		switch {
		case u < 0.75:
			st = s.diskStar(thinDisk)
		case u < 0.93:
			st = s.diskStar(thickDisk)
		default:
			st = s.haloStar()
		}
		if s.finish(st) {
			return st, nil
		}
	}
	return nil, fmt.Errorf("scenario: background star: %w", ErrSampling)
}

// gcEjectee launches a star from r = 0.01-0.05 kpc in an isotropic
// direction with the ejection model the orbit method assumes
// (weigh.DefaultEjection: its speed law refers to weigh.EjectionDepthKpc,
// so the launch speed is that speed carried by energy to r0) and
// integrates it for a flight time drawn from the model in the model.
func (s *sampler) gcEjectee() (*star, error) {
	ej := weigh.DefaultEjection
	for range maxTries / 100 {
		r0 := s.uniform(0.01, 0.05)
		d := s.isotropic()
		x := [3]float64{r0 * d[0], r0 * d[1], r0 * d[2]}
		v0 := weigh.LaunchSpeedKms(s.g.model, x, ej.SampleSpeed(s.rng))
		e := s.isotropic()
		v := [3]float64{v0 * e[0], v0 * e[1], v0 * e[2]}
		tf := ej.SampleFlightMyr(s.rng)
		st := &star{pop: PopGCEjectee, origin: orbit.OriginGC, flightMyr: tf,
			absMag: s.uniform(-1.5, 1.5), color: -0.15 + 0.08*s.rng.NormFloat64()}
		st.launchPos, st.launchVel = x, v
		st.posKpc, st.velKms = s.g.advance(x, v, tf)
		if s.finish(st) {
			return st, nil
		}
	}
	return nil, fmt.Errorf("scenario: galactic-centre ejectee: %w", ErrSampling)
}

// diskRunaway kicks a young disk star by 200-500 km/s (isotropic) on top of
// the local circular velocity and integrates it for 5-60 Myr.
func (s *sampler) diskRunaway() (*star, error) {
	for range maxTries / 100 {
		x := s.diskPosition(2.6, 0.05, 3, 15)
		_, ePhi := rotation(x)
		vc := s.g.vcirc(math.Hypot(x[0], x[1]))
		k := s.uniform(200, 500)
		e := s.isotropic()
		var v [3]float64
		for i := range 3 {
			v[i] = vc*ePhi[i] + k*e[i]
		}
		tf := s.uniform(5, 60)
		st := &star{pop: PopDiskRunaway, origin: orbit.OriginDisk, flightMyr: tf,
			absMag: s.uniform(-3, 0.5), color: -0.2 + 0.08*s.rng.NormFloat64()}
		st.launchPos, st.launchVel = x, v
		st.posKpc, st.velKms = s.g.advance(x, v, tf)
		if s.finish(st) {
			return st, nil
		}
	}
	return nil, fmt.Errorf("scenario: disk runaway: %w", ErrSampling)
}

// The fast halo is the halo's own speed law conditioned on a speed of at
// least haloFastMinKms, i.e. on f >= max(haloBulkEdge, haloFastMinKms /
// v_esc(x)): above that threshold it has the tail law's shape at every
// position, so the halo and the fast halo together keep the power law
// (v_esc - v)^k above v_min = 300 km/s. The threshold lies 50 km/s below
// v_min so that stars carried across v_min by their errors come from both
// sides of it, as in the halo itself. Its stars lie at 3 to
// haloFastMaxKpc from the centre: a choice of positions, which leaves
// the speed law at each position alone, made so that the tail's stars are
// where v_esc(x) stands well above v_min (at half the default halo mass
// v_esc is 322-328 km/s at 20 kpc) and the distances are good enough to
// measure them. Both values are ours.
const (
	haloFastMinKms = 250
	haloFastMaxKpc = 30
)

// haloFast draws a fast halo star (see haloFastMinKms): bound, but fast.
// Where the local escape speed is not above the threshold no such star
// exists, and the position is drawn again.
func (s *sampler) haloFast() (*star, error) {
	for range maxTries / 10 {
		r := s.haloRadius(3, haloFastMaxKpc)
		d := s.isotropic()
		x := [3]float64{r * d[0], r * d[1], r * d[2]}
		vesc := s.g.vesc(x)
		if vesc <= haloFastMinKms {
			continue
		}
		st := &star{pop: PopHaloFast, origin: OriginHalo, flightMyr: math.NaN(), posKpc: x,
			velKms: s.haloVelocity(x, haloFastMinKms/vesc),
			absMag: s.uniform(-0.5, 1.5), color: 0.7 + 0.2*s.rng.NormFloat64()}
		if s.finish(st) {
			return st, nil
		}
	}
	return nil, fmt.Errorf("scenario: fast halo star: %w", ErrSampling)
}

// trapHost draws a visible thick-disk or halo star inside the
// spectroscopic footprint with distance in [dMin, dMax] kpc.
func (s *sampler) trapHost(dMin, dMax float64) (*star, error) {
	for range maxTries {
		var st *star
		if s.rng.IntN(2) == 0 {
			st = s.diskStar(thickDisk)
		} else {
			st = s.haloStar()
		}
		if s.finish(st) && st.inFootprint && st.distKpc >= dMin && st.distKpc <= dMax {
			return st, nil
		}
	}
	return nil, fmt.Errorf("scenario: trap host: %w", ErrSampling)
}

// highPMStar draws a nearby star in the footprint whose total proper
// motion is 300-3000 mas/yr (log-uniform). Its velocity comes from the
// thick disk or halo at the Sun; the distance then follows from the
// heliocentric tangential speed: mu = v_t / (4.74 d).
func (s *sampler) highPMStar() (*star, error) {
	sunPos, _ := s.g.sun.ToGalactocentric(frames.NewBasis(0, 0), 0, 0, 0, 0)
	for range maxTries {
		var st *star
		if s.rng.IntN(2) == 0 {
			st = s.diskStar(thickDisk)
		} else {
			st = s.haloStar()
		}
		// Velocities are those of the population at the Sun; nearby
		// dwarfs.
		if st.pop == PopHalo {
			st.velKms = s.haloVelocity(sunPos, 0)
			st.absMag = s.uniform(5, 10)
		} else {
			st.velKms = s.diskVelocity(thickDisk, sunPos)
			st.absMag = s.uniform(4, 11)
		}
		if speed(st.velKms) >= s.g.vesc(sunPos) {
			continue
		}
		ra := 2 * math.Pi * s.rng.Float64()
		dec := math.Asin(2*s.rng.Float64() - 1)
		if !inFootprint(ra/units.RadPerDeg, dec/units.RadPerDeg) {
			continue
		}
		b := frames.NewBasis(ra, dec)
		pos1, _ := s.g.sun.ToGalactocentric(b, 1, 0, 0, 0)
		_, _, _, pmra1, pmdec1, _ := fromGalactocentric(s.g.sun, pos1, st.velKms)
		mu1 := math.Hypot(pmra1, pmdec1) // mas/yr at 1 kpc
		target := 300 * math.Pow(10, s.rng.Float64())
		d := mu1 / target
		if d < 0.005 || d > 0.3 {
			continue
		}
		st.posKpc, _ = s.g.sun.ToGalactocentric(b, d, 0, 0, 0)
		if !s.finish(st) || !st.inFootprint {
			continue
		}
		st.trap = TrapHighPM
		return st, nil
	}
	return nil, fmt.Errorf("scenario: high proper motion star: %w", ErrSampling)
}

func clamp(x, lo, hi float64) float64 { return math.Max(lo, math.Min(hi, x)) }
