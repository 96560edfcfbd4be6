package scenario

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"starvet/galaxy/weigh"

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
	g, err := newGalaxy(cfg.HaloScale)
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
	if err := s.writeHaloTruth(); err != nil {
		return nil, err
	}
	return s, nil
}

// HaloTruthFile holds the simulated Galaxy's halo (HaloTruth) beside
// truth.csv.
const HaloTruthFile = "truth_halo.json"

// HaloTruth is the dark halo of the Galaxy a scenario simulated, for
// scoring what starvet weigh infers.
type HaloTruth struct {
	HaloScale float64 `json:"halo_scale"`
	M200Msun  float64 `json:"halo_m200_msun"`
	// M200RelationMsun is the M200 of the halo on the concentration-mass
	// relation (weigh.NFWHalo) that gives, with the same bulge and disk,
	// the same escape speed at the Sun to infinity: what the velocity-tail
	// method estimates when it is right.
	M200RelationMsun float64 `json:"halo_m200_relation_msun"`
	VEscSunKms       float64 `json:"escape_speed_sun_kms"`          // to 2 r200 (weigh.EscapeTo2R200)
	VEscSunInfKms    float64 `json:"escape_speed_sun_infinity_kms"` // to infinity
}

func (s *Scenario) writeHaloTruth() error {
	h, err := weigh.HaloOf(s.galaxy.model)
	if err != nil {
		return fmt.Errorf("scenario: %w", err)
	}
	sun := weigh.SunPositionKpc(s.galaxy.sun)
	v2, err := weigh.HaloEscapeSpeed(s.galaxy.model, h, sun, weigh.EscapeTo2R200)
	if err != nil {
		return fmt.Errorf("scenario: %w", err)
	}
	t := HaloTruth{HaloScale: s.Config.HaloScale, M200Msun: h.M200Msun, VEscSunKms: v2, VEscSunInfKms: s.galaxy.vesc(sun)}
	rel, err := weigh.M200ForEscape(s.galaxy.model, sun, t.VEscSunInfKms, weigh.EscapeToInfinity)
	if err != nil {
		return fmt.Errorf("scenario: %w", err)
	}
	t.M200RelationMsun = rel.M200Msun
	data, err := json.MarshalIndent(t, "", "  ")
	if err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(s.Dir, HaloTruthFile), append(data, '\n'), 0o644)
}

// LoadHaloTruth reads a scenario's HaloTruthFile in dir.
func LoadHaloTruth(dir string) (*HaloTruth, error) {
	data, err := os.ReadFile(filepath.Join(dir, HaloTruthFile))
	if err != nil {
		return nil, err
	}
	var t HaloTruth
	if err := json.Unmarshal(data, &t); err != nil {
		return nil, fmt.Errorf("%s: %w", filepath.Join(dir, HaloTruthFile), err)
	}
	return &t, nil
}

// fakePM returns a proper motion (mas/yr) that at distKpc would mean a
// tangential speed of vMin-vMax km/s, in a random direction.
func fakePM(rng *rand.Rand, distKpc, vMin, vMax float64) [2]float64 {
	v := vMin + (vMax-vMin)*rng.Float64()
	mu := v / (units.KmsPerMasYrKpc * distKpc)
	a := 2 * math.Pi * rng.Float64()
	return [2]float64{mu * math.Cos(a), mu * math.Sin(a)}
}

// sample draws every star of the primary catalog. The steps share one
// random stream, so their order below is the order of the draws; after an
// error the remaining steps draw nothing.
func (s *Scenario) sample() error {
	cn := countsFor(s.Config)
	smp := &sampler{g: s.galaxy, rng: rand.New(rand.NewPCG(s.Config.Seed, streamPopulations))}
	var stars []*star
	var err error
	draw := func(n int, f func() (*star, error)) {
		for i := 0; i < n && err == nil; i++ {
			var st *star
			if st, err = f(); err == nil {
				stars = append(stars, st)
			}
		}
	}
	draw(cn.ejectees, smp.gcEjectee)
	draw(cn.injected, smp.diskRunaway)
	draw(cn.haloFast, smp.haloFast)
	draw(cn.binaries, smp.binary)
	for i := 0; i < cn.duplicates && err == nil; i++ {
		var host, twin *star
		if host, twin, err = smp.duplicatePair(); err == nil {
			stars = append(stars, host, twin)
		}
	}
	draw(cn.rvOutliers, smp.rvOutlier)
	draw(cn.crowded, smp.crowdedHost)
	draw(cn.highPM, smp.highPMStar)
	draw(cn.badAstro, smp.badValueHost)
	draw(s.Config.Stars-len(stars), smp.background)
	if err != nil {
		return err
	}
	s.shuffleAndNumber(stars)
	return nil
}

// binary is a trap: a host whose unresolved companion spoils the fit and
// fakes a large proper motion.
func (smp *sampler) binary() (*star, error) {
	st, err := smp.trapHost(0.3, 2.5)
	if err != nil {
		return nil, err
	}
	st.trap, st.artefact = TrapBinary, true
	st.fakePM = fakePM(smp.rng, st.distKpc, 500, 900)
	return st, nil
}

// duplicatePair is a trap: a host and its twin, a second primary row
// 100-300 mas away with a fake proper motion.
func (smp *sampler) duplicatePair() (host, twin *star, err error) {
	host, err = smp.trapHost(0.3, 2.5)
	if err != nil {
		return nil, nil, err
	}
	host.trap, host.artefact = TrapDuplicate, true
	t := *host
	t.twinOf = host
	sepMas := smp.uniform(100, 300)
	a := 2 * math.Pi * smp.rng.Float64()
	t.offsetMas = [2]float64{sepMas * math.Cos(a), sepMas * math.Sin(a)}
	t.fakePM = fakePM(smp.rng, host.distKpc, 500, 900)
	return host, &t, nil
}

// rvOutlier is a trap host whose spectrum will carry a wrong rv.
func (smp *sampler) rvOutlier() (*star, error) {
	st, err := smp.trapHost(0.5, 15)
	if err != nil {
		return nil, err
	}
	st.trap, st.artefact = TrapRVOutlier, true
	return st, nil
}

// crowdedHost is a trap: a fast halo star (haloFast: the halo's own speed
// law, so the halo keeps its tail's shape) in the footprint at 0.5-10 kpc
// whose neighbour's spectrum lies close by.
func (smp *sampler) crowdedHost() (*star, error) {
	for range maxTries {
		st, err := smp.haloFast()
		if err != nil {
			return nil, err
		}
		if st.inFootprint && st.distKpc >= 0.5 && st.distKpc <= 10 {
			st.pop, st.trap, st.artefact = PopHalo, TrapCrowded, true
			return st, nil
		}
	}
	return nil, fmt.Errorf("scenario: crowded-field host: %w", ErrSampling)
}

// badValueHost is a background star whose row will carry a bad value.
func (smp *sampler) badValueHost() (*star, error) {
	st, err := smp.background()
	if err != nil {
		return nil, err
	}
	st.trap, st.artefact = TrapBadValue, true
	return st, nil
}

// shuffleAndNumber shuffles the stars so that file order and ids reveal
// nothing, then numbers them.
func (s *Scenario) shuffleAndNumber(stars []*star) {
	shuf := rand.New(rand.NewPCG(s.Config.Seed, streamShuffle))
	shuf.Shuffle(len(stars), func(i, j int) { stars[i], stars[j] = stars[j], stars[i] })
	s.byID = make(map[string]*star, len(stars))
	for i, st := range stars {
		st.id = fmt.Sprintf("PL-%07d", i+1)
		st.revised = 1
		s.byID[st.id] = st
	}
	s.stars = stars
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

// observe draws every catalog row. The stars are observed one after the
// other from one random stream, each in a fixed order of draws.
func (s *Scenario) observe() {
	rng := rand.New(rand.NewPCG(s.Config.Seed, streamObserve))
	o := &observation{badSpecWanted: countsFor(s.Config).badSpec}
	for _, st := range s.stars {
		s.observeStar(st, rng, o)
	}
	s.orderRows(o.neighbours)
}

// observation is what observing one star leaves for the next.
type observation struct {
	neighbours    []*specRow // spectra of neighbours in crowded fields
	nBadAstro     int        // bad astrometric rows so far
	nBadSpec      int        // bad spectroscopic rows so far
	badSpecWanted int        // bad spectroscopic rows wanted in all
}

// observeStar draws st's astrometric row, then its photometry and, in the
// footprint, its spectrum, each with the defects of its trap.
func (s *Scenario) observeStar(st *star, rng *rand.Rand, o *observation) {
	clean := Injected(st.pop) || (st.trap != "" && st.trap != TrapBadValue)
	st.astro = observeAstro(st, rng, 1, clean)
	if st.twinOf != nil {
		st.astro.duplicateFlag = 1
		return // no separate light in other catalogs
	}
	switch st.trap {
	case TrapBinary:
		st.astro.fitResidual = 2 + 4*rng.Float64()
		st.astro.excessNoiseMas = 0.3 + 2.7*rng.Float64()
		st.astro.excessNoiseSig = 5 + 55*rng.Float64()
	case TrapBadValue:
		b := astroBad[o.nBadAstro%len(astroBad)]
		st.bad = &b
		o.nBadAstro++
	}
	if st.mag < magLimitPhotometry {
		st.phot = observePhot(st, rng)
	}
	if !st.inFootprint {
		return
	}
	observeSpectrum(st, rng)
	if st.spec == nil {
		return
	}
	st.spec.release = st.specRelease
	switch st.trap {
	case TrapRVOutlier:
		spoilRV(st, rng)
	case TrapCrowded:
		o.neighbours = append(o.neighbours, s.neighbour(st, rng))
	case "":
		if o.nBadSpec < o.badSpecWanted && st.specRelease == 1 && !Injected(st.pop) {
			b := specBad[o.nBadSpec%len(specBad)]
			st.spec.bad = &b
			o.nBadSpec++
		}
	}
}

// observeSpectrum decides whether st, in the footprint, has a spectrum and
// in which release: every injected star (a tenth withheld until release
// 2) and trap, and a quarter of the bright background.
func observeSpectrum(st *star, rng *rand.Rand) {
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
}

// spoilRV gives an rv-outlier trap's spectrum a low snr and an rv
// 300-700 km/s off.
func spoilRV(st *star, rng *rand.Rand) {
	sp := st.spec
	sp.snr = 3 + 6.5*rng.Float64()
	sp.rvErrKms = 30 + 60*rng.Float64()
	off := 300 + 400*rng.Float64()
	if rng.IntN(2) == 0 {
		off = -off
	}
	sp.rvKms = st.rvKms + off
}

// orderRows puts the spectroscopic rows (release-1 rows and the
// neighbours shuffled, then release-2 rows shuffled) and the photometric
// rows (shuffled) in file order and numbers them.
func (s *Scenario) orderRows(neighbours []*specRow) {
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
	r1 = append(r1, neighbours...)
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
	ra, dec := propagateDeg(st.raDeg, st.decDeg, st.distKpc, st.pmRA, st.pmDec, st.rvKms, SpectroscopyEpochJyr-AstrometryEpochJyr)
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
