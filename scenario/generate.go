package scenario

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"

	"starvet/galaxy/orbit"
	"starvet/internal/units"
)

// Independent random streams, one per stage, so that changing one stage
// leaves the draws of the others alone.
const (
	streamPopulations uint64 = 0x5ca1ab1e00000001 + iota
	streamShuffle
	streamObserve
	streamUpdate
)

// Scenario is a generated campaign: where its files are and the truth.
type Scenario struct {
	Config Config
	Dir    string
	// Release is the current release number (1 after Generate, +1 per
	// Update).
	Release int
	// Paths of the files written, absolute or relative as Dir is.
	CampaignPath, TruthPath, BadRowsPath string
	AstrometryPath, SpectroscopyPath     string
	PhotometryPath                       string
	Truth                                []TruthRow // one per primary row, in file order
	BadRows                              []BadRow   // rows that must be quarantined
	// Changed lists, after an Update, the primary ids whose input data
	// changed (revised astrometry or a new spectrum), sorted.
	Changed []string

	galaxy   *galaxy
	stars    []*star    // in primary file order
	specRows []*specRow // in spectroscopic file order, all releases
	photRows []*photRow
	byID     map[string]*star
}

// TruthRow is one line of truth.csv.
type TruthRow struct {
	StarID       string
	Population   string
	TrulyUnbound bool // true speed above the model escape speed at the true position
	// AdequateData: the data allow a verdict. True when, in the current
	// release, the row is not a trap or a bad row; its fit passes the
	// default astrometric cuts (fit_residual <= 1.4, excess_noise_sig <= 2,
	// fit_visits >= 8, duplicate_flag 0); it has a spectrum with
	// snr >= 10 (so it lies in the spectroscopic footprint); and either
	// parallax/parallax_err >= 5 or the spectrum gives a distance. Defined
	// from data quality only, never from a verdict.
	AdequateData bool
	// MarginSigma is (true speed - true escape speed) over the uncertainty
	// of that difference implied by the star's published errors
	// (speedMargin); NaN without a usable spectrum and distance.
	MarginSigma float64
	// Decidable: truly unbound with adequate data and a margin of at least
	// DecidableSigma, so that its data can show it unbound. The
	// completeness denominator counts these stars; the completeness over
	// every adequate-data unbound star is reported beside it.
	Decidable         bool
	Trap              string // "" or a Trap* label
	Artefact          bool   // must not end "unbound"
	OriginTrue        orbit.Origin
	FlightTimeMyrTrue float64 // NaN unless ejected or kicked
	VGCTrueKms        float64 // true Galactocentric speed
	VEscTrueKms       float64 // model escape speed at the true position
	DistTrueKpc       float64
	PosKpc            [3]float64 // true Galactocentric position
	VelKms            [3]float64 // true Galactocentric velocity
	InFootprint       bool
	HasSpectrum       bool   // a spectrum of the star itself is in the current release
	SpecID            string // its spectroscopic id, "" if none
}

// BadRow is a row written with an impossible value.
type BadRow struct {
	File       string // base name
	Line       int    // 1-based, header is line 1
	Column     int    // 1-based
	ColumnName string
	ID         string
	Reason     string
}

// Injected reports whether the population is one of the injected ones.
func Injected(pop string) bool {
	return pop == PopGCEjectee || pop == PopDiskRunaway || pop == PopHaloFast
}

// Generate writes a scenario into dir (created if missing): the three
// catalogs of release 1, the campaign file, truth.csv and bad_rows.csv.
// The output is a function of cfg alone.
func Generate(cfg Config, dir string) (*Scenario, error) {
	cfg, err := cfg.withDefaults()
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("scenario: %w", err)
	}
	g, err := newGalaxy()
	if err != nil {
		return nil, err
	}
	s := &Scenario{Config: cfg, Dir: dir, Release: 1, galaxy: g}
	if err := s.sample(); err != nil {
		return nil, err
	}
	s.observe()
	if err := s.write(); err != nil {
		return nil, err
	}
	return s, nil
}

// fakePM returns a proper motion (mas/yr) that at distKpc would mean a
// tangential speed of vMin-vMax km/s, in a random direction.
func fakePM(rng *rand.Rand, distKpc, vMin, vMax float64) [2]float64 {
	v := vMin + (vMax-vMin)*rng.Float64()
	mu := v / (units.KmsPerMasYrKpc * distKpc)
	a := 2 * math.Pi * rng.Float64()
	return [2]float64{mu * math.Cos(a), mu * math.Sin(a)}
}

// sample draws every star of the primary catalog.
func (s *Scenario) sample() error {
	cn := countsFor(s.Config)
	rng := rand.New(rand.NewPCG(s.Config.Seed, streamPopulations))
	smp := &sampler{g: s.galaxy, rng: rng}
	var stars []*star
	add := func(n int, f func() (*star, error)) error {
		for range n {
			st, err := f()
			if err != nil {
				return err
			}
			stars = append(stars, st)
		}
		return nil
	}
	if err := add(cn.injected, smp.gcEjectee); err != nil {
		return err
	}
	if err := add(cn.injected, smp.diskRunaway); err != nil {
		return err
	}
	if err := add(cn.injected, func() (*star, error) { return smp.haloFast(0.6, 0.95) }); err != nil {
		return err
	}
	err := add(cn.binaries, func() (*star, error) {
		st, err := smp.trapHost(0.3, 2.5)
		if err != nil {
			return nil, err
		}
		st.trap, st.artefact = TrapBinary, true
		st.fakePM = fakePM(rng, st.distKpc, 500, 900)
		return st, nil
	})
	if err != nil {
		return err
	}
	for range cn.duplicates {
		host, err := smp.trapHost(0.3, 2.5)
		if err != nil {
			return err
		}
		host.trap, host.artefact = TrapDuplicate, true
		twin := *host
		twin.twinOf = host
		sepMas := smp.uniform(100, 300)
		a := 2 * math.Pi * rng.Float64()
		twin.offsetMas = [2]float64{sepMas * math.Cos(a), sepMas * math.Sin(a)}
		twin.fakePM = fakePM(rng, host.distKpc, 500, 900)
		stars = append(stars, host, &twin)
	}
	err = add(cn.rvOutliers, func() (*star, error) {
		st, err := smp.trapHost(0.5, 15)
		if err != nil {
			return nil, err
		}
		st.trap, st.artefact = TrapRVOutlier, true
		return st, nil
	})
	if err != nil {
		return err
	}
	err = add(cn.crowded, func() (*star, error) {
		for range maxTries {
			st, err := smp.haloFast(0.5, 0.8)
			if err != nil {
				return nil, err
			}
			if st.inFootprint && st.distKpc >= 0.5 && st.distKpc <= 10 {
				st.pop, st.trap, st.artefact = PopHalo, TrapCrowded, true
				return st, nil
			}
		}
		return nil, fmt.Errorf("scenario: crowded-field host: %w", ErrSampling)
	})
	if err != nil {
		return err
	}
	if err := add(cn.highPM, smp.highPMStar); err != nil {
		return err
	}
	err = add(cn.badAstro, func() (*star, error) {
		st, err := smp.background()
		if err != nil {
			return nil, err
		}
		st.trap, st.artefact = TrapBadValue, true
		return st, nil
	})
	if err != nil {
		return err
	}
	nBack := s.Config.Stars - len(stars)
	if err := add(nBack, smp.background); err != nil {
		return err
	}

	// Shuffle so that file order and ids reveal nothing.
	shuf := rand.New(rand.NewPCG(s.Config.Seed, streamShuffle))
	shuf.Shuffle(len(stars), func(i, j int) { stars[i], stars[j] = stars[j], stars[i] })
	s.byID = make(map[string]*star, len(stars))
	for i, st := range stars {
		st.id = fmt.Sprintf("PL-%07d", i+1)
		st.revised = 1
		s.byID[st.id] = st
	}
	s.stars = stars
	return nil
}

// Bad-value kinds, cycled over the bad rows.
var astroBad = []badCell{
	{header: "plx", text: "0.41x", reason: "not a number"},
	{header: "dec", text: "93.4170", reason: "dec out of range"},
	{header: "plx_err", text: "-0.0520", reason: "negative uncertainty"},
	{header: "pm_ra", text: "fast", reason: "not a number"},
	{header: "pm_dec_err", text: "-0.1100", reason: "negative uncertainty"},
	{header: "dec", text: "-90.5000", reason: "dec out of range"},
}

var specBad = []badCell{
	{header: "vel", text: "3o1.5", reason: "not a number"},
	{header: "vel_err", text: "-850.0", reason: "negative uncertainty"},
}

// observe draws every catalog row.
func (s *Scenario) observe() {
	cn := countsFor(s.Config)
	rng := rand.New(rand.NewPCG(s.Config.Seed, streamObserve))
	var extra []*specRow // neighbours in crowded fields
	nBadAstro, nBadSpec := 0, 0
	for _, st := range s.stars {
		clean := Injected(st.pop) || (st.trap != "" && st.trap != TrapBadValue)
		st.astro = observeAstro(st, rng, 1, clean)
		if st.twinOf != nil {
			st.astro.duplicateFlag = 1
			continue // no separate light in other catalogs
		}
		switch st.trap {
		case TrapBinary:
			st.astro.fitResidual = 2 + 4*rng.Float64()
			st.astro.excessNoiseMas = 0.3 + 2.7*rng.Float64()
			st.astro.excessNoiseSig = 5 + 55*rng.Float64()
		case TrapBadValue:
			b := astroBad[nBadAstro%len(astroBad)]
			st.bad = &b
			nBadAstro++
		}
		if st.mag < magLimitPhotometry {
			st.phot = observePhot(st, rng)
		}
		if !st.inFootprint {
			continue
		}
		switch {
		case Injected(st.pop):
			st.spec = observeSpec(st, rng)
			st.specRelease = 1
			if rng.Float64() < 0.1 {
				st.specRelease = 2 // withheld until the next release
			}
		case st.trap != "" && st.trap != TrapBadValue:
			st.spec = observeSpec(st, rng)
			st.specRelease = 1
		case st.mag < magLimitSpecBack:
			u := rng.Float64()
			if u < 0.25 {
				st.spec = observeSpec(st, rng)
				st.specRelease = 1
			} else if u < 0.26 {
				st.spec = observeSpec(st, rng)
				st.specRelease = 2
			}
		}
		if st.spec == nil {
			continue
		}
		st.spec.release = st.specRelease
		switch st.trap {
		case TrapRVOutlier:
			sp := st.spec
			sp.snr = 3 + 6.5*rng.Float64()
			sp.rvErrKms = 30 + 60*rng.Float64()
			off := 300 + 400*rng.Float64()
			if rng.IntN(2) == 0 {
				off = -off
			}
			sp.rvKms = st.rvKms + off
		case TrapCrowded:
			extra = append(extra, s.neighbour(st, rng))
		case "":
			if nBadSpec < cn.badSpec && st.specRelease == 1 && !Injected(st.pop) {
				b := specBad[nBadSpec%len(specBad)]
				st.spec.bad = &b
				nBadSpec++
			}
		}
	}

	// Spectroscopic rows: release-1 rows shuffled, then release-2 rows.
	var r1, r2 []*specRow
	for _, st := range s.stars {
		if st.spec != nil {
			if st.spec.release == 1 {
				r1 = append(r1, st.spec)
			} else {
				r2 = append(r2, st.spec)
			}
		}
	}
	r1 = append(r1, extra...)
	shuf := rand.New(rand.NewPCG(s.Config.Seed, streamShuffle^0xff))
	shuf.Shuffle(len(r1), func(i, j int) { r1[i], r1[j] = r1[j], r1[i] })
	shuf.Shuffle(len(r2), func(i, j int) { r2[i], r2[j] = r2[j], r2[i] })
	s.specRows = append(r1, r2...)
	for i, r := range s.specRows {
		r.id = fmt.Sprintf("VB-%06d", i+1)
	}
	for _, st := range s.stars {
		if st.phot != nil {
			s.photRows = append(s.photRows, st.phot)
		}
	}
	shuf.Shuffle(len(s.photRows), func(i, j int) { s.photRows[i], s.photRows[j] = s.photRows[j], s.photRows[i] })
	for i, r := range s.photRows {
		r.id = fmt.Sprintf("TR-%07d", i+1)
	}
}

// neighbour makes the spectrum of a faint star 0.5-0.8 arcsec from st at
// the spectroscopic epoch, with an rv 400-700 km/s away from st's, so that
// taking it for st's spectrum would make st look unbound.
func (s *Scenario) neighbour(st *star, rng *rand.Rand) *specRow {
	ra, dec := propagateDeg(st.raDeg, st.decDeg, st.pmRA, st.pmDec, SpectroscopyEpochJyr-AstrometryEpochJyr)
	sep := 500 + 300*rng.Float64()
	a := 2 * math.Pi * rng.Float64()
	const posErrMas = 80
	ra, dec = offsetDeg(ra, dec, sep*math.Cos(a)+posErrMas*rng.NormFloat64(), sep*math.Sin(a)+posErrMas*rng.NormFloat64())
	snr := snrFor(st.mag+0.5, rng)
	off := 400 + 300*rng.Float64()
	if rng.IntN(2) == 0 {
		off = -off
	}
	rvErr := rvErrFor(snr)
	row := &specRow{raDeg: ra, decDeg: dec, posErrMas: posErrMas, snr: snr, rvKms: st.rvKms + off + rvErr*rng.NormFloat64(),
		rvErrKms: rvErr, distMod: math.NaN(), distModErr: math.NaN(), release: 1}
	if st.distKpc > spectroDistanceMinKpc {
		row.distModErr = 0.217 + (0.434-0.217)*rng.Float64()
		row.distMod = distModulus(st.distKpc*(0.8+0.45*rng.Float64())) + row.distModErr*rng.NormFloat64()
	}
	return row
}

// truth computes the truth rows for the current release.
func (s *Scenario) truth() []TruthRow {
	rows := make([]TruthRow, len(s.stars))
	for i, st := range s.stars {
		src := st
		if st.twinOf != nil {
			src = st.twinOf
		}
		vesc := s.galaxy.vesc(src.posKpc)
		vgc := speed(src.velKms)
		r := TruthRow{
			StarID: st.id, Population: src.pop, TrulyUnbound: vgc > vesc, Trap: st.trap, Artefact: st.artefact,
			OriginTrue: src.origin, FlightTimeMyrTrue: src.flightMyr, VGCTrueKms: vgc, VEscTrueKms: vesc,
			DistTrueKpc: src.distKpc, PosKpc: src.posKpc, VelKms: src.velKms, InFootprint: src.inFootprint,
		}
		if sp := st.spec; sp != nil && sp.release <= s.Release {
			r.HasSpectrum, r.SpecID = true, sp.id
		}
		r.AdequateData = s.adequate(st)
		r.MarginSigma = math.NaN()
		if r.AdequateData {
			r.MarginSigma = s.speedMargin(st)
		}
		r.Decidable = r.TrulyUnbound && r.AdequateData && r.MarginSigma >= DecidableSigma
		rows[i] = r
	}
	return rows
}

// adequate implements the AdequateData definition of TruthRow.
func (s *Scenario) adequate(st *star) bool {
	if st.artefact || st.bad != nil || st.twinOf != nil {
		return false
	}
	a := st.astro
	if a.fitResidual > 1.4 || a.excessNoiseSig > 2 || a.fitVisits < 8 || a.duplicateFlag != 0 {
		return false
	}
	sp := st.spec
	if sp == nil || sp.release > s.Release || sp.bad != nil || sp.snr < 10 {
		return false
	}
	return a.plxMas/a.plxErrMas >= 5 || !math.IsNaN(sp.distMod)
}

// write writes every file of the current release.
func (s *Scenario) write() error {
	r := s.Release
	s.AstrometryPath = filepath.Join(s.Dir, fmt.Sprintf("%s_r%d.csv.gz", AstrometryName, r))
	s.SpectroscopyPath = filepath.Join(s.Dir, fmt.Sprintf("%s_r%d.csv", SpectroscopyName, r))
	s.PhotometryPath = filepath.Join(s.Dir, PhotometryName+".csv")
	s.CampaignPath = filepath.Join(s.Dir, CampaignFile)
	s.TruthPath = filepath.Join(s.Dir, TruthFile)
	s.BadRowsPath = filepath.Join(s.Dir, BadRowsFile)
	s.BadRows = nil
	if err := s.writeAstrometry(); err != nil {
		return err
	}
	if err := s.writeSpectroscopy(); err != nil {
		return err
	}
	if err := s.writePhotometry(); err != nil {
		return err
	}
	sort.SliceStable(s.BadRows, func(i, j int) bool {
		if s.BadRows[i].File != s.BadRows[j].File {
			return s.BadRows[i].File < s.BadRows[j].File
		}
		return s.BadRows[i].Line < s.BadRows[j].Line
	})
	s.Truth = s.truth()
	if err := writeTruth(s.TruthPath, s.Truth); err != nil {
		return err
	}
	if err := writeBadRows(s.BadRowsPath, s.BadRows); err != nil {
		return err
	}
	return s.writeCampaign()
}
