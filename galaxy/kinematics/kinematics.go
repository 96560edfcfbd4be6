package kinematics

import (
	"errors"
	"fmt"
	"math"

	"starvet/galaxy/frames"
	"starvet/galaxy/potential"
)

// Distance methods (Settings.Distance and Result.Method).
const (
	MethodAuto    = "auto"
	MethodInverse = "inverse"
	MethodEDSD    = "edsd"
	MethodCatalog = "catalog"
)

// Reason codes. A fatal reason leaves Result.OK false and the numbers NaN.
const (
	ReasonSettings         = "settings"                  // fatal: Settings failed Validate
	ReasonNoPosition       = "no-position"               // fatal: ra or dec missing
	ReasonProperMotion     = "no-proper-motion"          // fatal: pm or its uncertainty missing or invalid
	ReasonNoDistance       = "no-distance"               // fatal: neither a usable parallax nor a catalog distance
	ReasonNoParallax       = "no-parallax"               // fatal: method needs a parallax that is missing or invalid
	ReasonNonPositivePlx   = "non-positive-parallax"     // fatal: inverse distance of a non-positive parallax
	ReasonPlxDrawsDropped  = "parallax-draws-dropped"    // some inverse-distance draws had parallax <= 0 and were dropped
	ReasonCovariance       = "covariance-not-pd"         // fatal: covariance of parallax and proper motions not positive definite
	ReasonCatalogDistance  = "catalog-distance"          // fatal under "catalog", note under "auto": catalog distance unusable
	ReasonNoRV             = "no-radial-velocity"        // not fatal: speeds are lower bounds
	ReasonBadUncertainty   = "bad-uncertainty"           // fatal: a negative uncertainty
	ReasonBadCorrelation   = "bad-correlation"           // fatal: a correlation outside [-1, 1]
	ReasonDegenerateSample = "degenerate-distance-pdf"   // fatal: the EDSD posterior could not be tabulated
	ReasonPlxConflict      = "catalog-parallax-conflict" // the parallax and the catalog distance disagree (fatal below 1/200 of the catalog distance admitted)
	ReasonPriorDominated   = "prior-dominated"           // the velocity prior leaves an effective sample size below a fifth of the draws
)

// ErrSettings is wrapped by every Settings.Validate error.
var ErrSettings = errors.New("invalid kinematics settings")

// Star is the per-star input. NaN marks a missing value; a missing
// correlation is taken as 0. Angles in deg, parallax and its error in mas,
// proper motions in mas/yr (PMRAMasYr is mu_alpha* = mu_alpha cos dec),
// radial velocity in km/s, distances in kpc, distance modulus in mag.
type Star struct {
	ID                                  string
	RADeg, DecDeg                       float64
	ParallaxMas, ParallaxErrMas         float64
	PMRAMasYr, PMRAErrMasYr             float64
	PMDecMasYr, PMDecErrMasYr           float64
	CorrParallaxPMRA, CorrParallaxPMDec float64
	CorrPMRAPMDec                       float64
	RVKms, RVErrKms                     float64
	DistKpc, DistErrKpc                 float64
	DistMod, DistModErr                 float64
}

// Settings controls distances and the Monte Carlo.
type Settings struct {
	Distance                string  // auto, inverse, edsd, catalog; "" means auto
	EDSDLengthKpc           float64 // length scale L of the EDSD prior
	MinParallaxSignificance float64 // auto: inverse distance when (parallax-zp)/error reaches this
	ParallaxZeroPointMas    float64 // subtracted from every measured parallax
	Samples                 int     // Monte Carlo draws per star
	Seed                    uint64  // mixed with the star ID into the star's random streams
	Sun                     frames.Sun
	EscapeRadiusKpc         float64 // 0: escape to infinity (Phi = 0 there)
	KeepSamples             int     // how many draws to return in SamplePos/SampleVel
	// VelocityPriorKms is sigma of the isotropic normal prior on the
	// Galactocentric velocity (prior.go); 0 keeps the flat prior. Stars
	// without a usable rv are never reweighted.
	VelocityPriorKms float64

	// Early stopping (stop.go); StopBelowP = 0 turns it off, and every star
	// then gets Samples draws exactly as before it existed.
	// StopBelowP: a star may end after fewer draws only when the one-sided
	// upper confidence bound on its unbound share (PUnbound with a radial
	// velocity, PUnboundLower without) lies below this probability.
	// StopSigma: the confidence of that bound as a one-sided Gaussian
	// tail, in sigma (5: tail probability 2.87e-7), shared among the looks.
	// TailEscFraction: a star whose speed's 84th percentile (SpeedKms[2],
	// or SpeedLowerKms[2] without rv) exceeds this fraction of its median
	// escape speed (VEscKms[1]) at a look never stops: it gets all
	// Samples. A stopped star's reported percentiles therefore never
	// exceed it (stop.go says what this costs).
	StopBelowP      float64
	StopSigma       float64
	TailEscFraction float64
}

// DefaultSettings returns the documented defaults for the given Sun:
// L = 1.35 kpc (Astraatmadja & Bailer-Jones 2016, ApJ 833, 119), inverse
// distance from parallax/error >= 5 (common practice), 1000 draws, 200 kept.
func DefaultSettings(sun frames.Sun) Settings {
	return Settings{
		Distance:                MethodAuto,
		EDSDLengthKpc:           1.35,
		MinParallaxSignificance: 5,
		Samples:                 1000,
		Sun:                     sun,
		KeepSamples:             200,
	}
}

// Validate reports the first problem with s; errors wrap ErrSettings.
func (s *Settings) Validate() error {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: %s", ErrSettings, fmt.Sprintf(format, a...))
	}
	switch s.Distance {
	case "", MethodAuto, MethodInverse, MethodEDSD, MethodCatalog:
	default:
		return bad("unknown distance method %q (want auto, inverse, edsd or catalog)", s.Distance)
	}
	if !(s.EDSDLengthKpc > 0) || math.IsInf(s.EDSDLengthKpc, 0) {
		return bad("edsd length %v kpc must be positive and finite", s.EDSDLengthKpc)
	}
	if math.IsNaN(s.MinParallaxSignificance) {
		return bad("minimum parallax over error is NaN")
	}
	if math.IsNaN(s.ParallaxZeroPointMas) || math.IsInf(s.ParallaxZeroPointMas, 0) {
		return bad("parallax zero point %v mas must be finite", s.ParallaxZeroPointMas)
	}
	if s.Samples < 1 {
		return bad("samples %d must be at least 1", s.Samples)
	}
	if s.KeepSamples < 0 {
		return bad("keep samples %d must not be negative", s.KeepSamples)
	}
	if !(s.Sun.DistanceKpc > 0) || math.Abs(s.Sun.HeightPc/1000) >= s.Sun.DistanceKpc {
		return bad("sun distance %v kpc / height %v pc unusable", s.Sun.DistanceKpc, s.Sun.HeightPc)
	}
	for i, v := range s.Sun.VelocityKms {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return bad("sun velocity component %d is %v", i, v)
		}
	}
	if !(s.VelocityPriorKms >= 0) || math.IsInf(s.VelocityPriorKms, 0) {
		return bad("velocity prior %v km/s must be 0 or positive and finite", s.VelocityPriorKms)
	}
	if !(s.StopBelowP >= 0 && s.StopBelowP <= 1) {
		return bad("stop-below probability %v must be in [0, 1] (0: no early stopping)", s.StopBelowP)
	}
	if !(s.StopSigma >= 0) || math.IsInf(s.StopSigma, 0) || !(s.TailEscFraction >= 0) || math.IsInf(s.TailEscFraction, 0) {
		return bad("stop sigma %v and tail escape fraction %v must be 0 or positive and finite", s.StopSigma, s.TailEscFraction)
	}
	if s.StopBelowP > 0 && !(s.StopSigma > 0 && s.TailEscFraction > 0) {
		return bad("early stopping (stop-below probability %v) needs a positive stop sigma (%v) and tail escape fraction (%v)", s.StopBelowP, s.StopSigma, s.TailEscFraction)
	}
	if !(s.EscapeRadiusKpc >= 0) || math.IsInf(s.EscapeRadiusKpc, 0) {
		return bad("escape radius %v kpc must be 0 or positive and finite", s.EscapeRadiusKpc)
	}
	return nil
}

// Reason says why a star's kinematics are missing or qualified.
type Reason struct {
	Code    string
	Message string
	Fatal   bool
}

// Result is the outcome for one star. Triples are the 16th, 50th and 84th
// percentiles of the Monte Carlo draws (linear interpolation between order
// statistics, Hyndman & Fan 1996, Am. Stat. 50, 361, definition 7). All
// vectors are Galactocentric (frames.Sun.ToGalactocentric): kpc and km/s.
type Result struct {
	ID      string
	OK      bool   // false when a fatal reason stopped the star
	Method  string // distance method used
	Reasons []Reason
	Samples int // draws used (fewer than Settings.Samples when some were dropped or the star stopped early)
	HasRV   bool
	// Stopped: early stopping ended the star before Settings.Samples draws
	// (Settings.StopBelowP); every number below then comes from the
	// Samples draws used.
	Stopped bool
	// PUnboundUpper is the one-sided upper confidence bound (Settings.
	// StopSigma, its share per look) on the unbound share (PUnbound, or
	// PUnboundLower without rv) from the draws used; NaN without early
	// stopping. A stopped star has it below Settings.StopBelowP.
	PUnboundUpper float64
	// EffectiveSamples is the effective sample size of the draws used:
	// Samples, or with the velocity prior Kish's (sum w)^2 / sum w^2.
	EffectiveSamples float64

	// With HasRV: Galactocentric speed, radial and tangential velocity about
	// the Galactic centre, and the share of draws faster than the escape
	// speed at their own position. NaN without HasRV. Each [3] holds the
	// 16th, 50th and 84th percentiles, except VRadialKms, VTangentialKms,
	// RGCKpc and VEscKms, whose spread is not used: only [1], the median,
	// is computed and [0], [2] are NaN.
	SpeedKms       [3]float64
	VRadialKms     [3]float64
	VTangentialKms [3]float64
	PUnbound       float64
	// PUnboundFlat is the unweighted share under the flat prior when the
	// velocity prior reweighted the draws (PUnbound is then the weighted
	// share); NaN otherwise.
	PUnboundFlat float64

	// Without HasRV: the minimum over all radial velocities of the
	// Galactocentric speed, and the share of draws unbound already at that
	// minimum. NaN with HasRV.
	SpeedLowerKms [3]float64
	PUnboundLower float64

	RGCKpc  [3]float64
	VEscKms [3]float64
	DistKpc [3]float64

	// PosKpc and VelKms: the star at the median distance with the measured
	// proper motions and rv (without HasRV: the minimum-speed velocity).
	PosKpc, VelKms [3]float64

	// The first KeepSamples draws, for orbit tracing. Without HasRV the
	// velocities are the minimum-speed ones.
	SamplePos, SampleVel [][3]float64
}

// Evaluate computes the kinematics of s into r (r is overwritten; its
// sample slices are reused when large enough).
func Evaluate(s *Star, set *Settings, p potential.Potential, r *Result) {
	var w worker
	w.evaluate(s, set, p, r)
}

func (r *Result) reset(id string) {
	nan := math.NaN()
	n3 := [3]float64{nan, nan, nan}
	keepPos, keepVel := r.SamplePos[:0], r.SampleVel[:0]
	*r = Result{
		ID: id, PUnboundUpper: nan, EffectiveSamples: nan,
		SpeedKms: n3, VRadialKms: n3, VTangentialKms: n3, PUnbound: nan, PUnboundFlat: nan,
		SpeedLowerKms: n3, PUnboundLower: nan, RGCKpc: n3, VEscKms: n3, DistKpc: n3,
		PosKpc: n3, VelKms: n3, SamplePos: keepPos, SampleVel: keepVel,
	}
}

func (r *Result) note(code, format string, a ...any) {
	r.Reasons = append(r.Reasons, Reason{Code: code, Message: fmt.Sprintf(format, a...)})
}

func (r *Result) fail(code, format string, a ...any) {
	r.Reasons = append(r.Reasons, Reason{Code: code, Message: fmt.Sprintf(format, a...), Fatal: true})
	r.OK = false
}
