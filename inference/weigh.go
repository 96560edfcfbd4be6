package inference

import (
	"context"
	"encoding/json"
	"fmt"
	"math"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/weigh"
	"starvet/vetting"
)

// Defaults of Options.
const (
	// DefaultVMinKms is the least median Galactocentric speed of the tail
	// sample, the median of the draws made again under the flat prior
	// (Piffl et al. 2014, A&A 562, A91, use 300 km/s).
	DefaultVMinKms = 300
	// DefaultHaloRelKms: a tail star must move at least this fast
	// relative to circular rotation at its own position, the kinematic
	// halo selection of Nissen & Schuster 2010 (A&A 511, L10: 220 km/s
	// relative to the local standard of rest; from memory), applied at the
	// star's own radius.
	DefaultHaloRelKms = 220
	// DefaultDraws is the Monte Carlo draws per star each method uses.
	DefaultDraws = 64
	// DefaultOutlierMax is the top of the uniform prior on the share of
	// the tail sample that the escape-speed model does not describe
	// (unbound ejectees and runaways, artefacts): our choice, wide,
	// because a vetted sample is selected to hold the fastest stars.
	DefaultOutlierMax = 0.5
	// tailCandidateFraction: the tail reads the run's stars down to this
	// fraction of v_min in the run's median speed, because it cuts on the
	// median of the draws made again with the flat prior, which for a
	// poorly measured star lies above the run's (shrunk by the velocity
	// prior of the campaign): half of v_min takes in every star whose
	// velocity errors are below the prior's 150 km/s per component
	// (shrinkage sigma_p^2/(sigma_p^2 + sigma^2) >= 1/2; ours).
	tailCandidateFraction = 0.5
	// outlierSteps tabulates that prior every 0.05.
	outlierSteps = 10
	// DefaultEjecteeMinKms is the least median speed of a star the orbit
	// method considers (our choice: well above the disk's and the
	// halo's bulk, below any Galactic-Centre ejectee still in the inner
	// halo).
	DefaultEjecteeMinKms = 450
)

// Method names, as stored in the ledger.
const (
	MethodTail   = "velocity-tail"
	MethodOrbits = "ejectee-orbits"
)

// Options tune Weigh.
type Options struct {
	RunID         int64   // 0: the last complete run
	VMinKms       float64 // 0: DefaultVMinKms
	HaloRelKms    float64 // 0: DefaultHaloRelKms
	EjecteeMinKms float64 // 0: DefaultEjecteeMinKms
	Draws         int     // 0: DefaultDraws
	// OrbitDraws, if in (0, Draws), is how many of each star's draws (the
	// first) the orbit method back-traces: its cost is one trace per draw
	// per halo of the grid. 0: all Draws.
	OrbitDraws int
	OutlierMax float64 // 0: DefaultOutlierMax
	// InfallOnly admits to the tail sample only stars falling towards the
	// Galactic Centre (Galactocentric radial velocity < 0 at the median
	// distance): a bound halo in equilibrium has as many falling in as
	// moving out, so the cut halves the sample without shaping its speeds,
	// while every star ejected from the centre moves out (our choice).
	InfallOnly bool
	// KPriorLow takes the tail slope's prior from the lower range Deason
	// et al. 2019 argue for (weigh.KMinDeason..KMaxDeason) instead of
	// Piffl et al. 2014's (weigh.KMinPiffl..KMaxPiffl).
	KPriorLow bool
	// Escape2R200 takes the escape speed to 2 r200 (Deason et al. 2019,
	// MNRAS 485, 3514) instead of to infinity (the campaign default) when
	// mapping it to the halo's mass.
	Escape2R200 bool
	Workers     int
	ToolVersion string
}

// Estimate is one inferred quantity: its median, 68 and 90 per cent
// intervals, and the stars that carry it.
type Estimate struct {
	Median float64 `json:"median"`
	Lo68   float64 `json:"lo68"`
	Hi68   float64 `json:"hi68"`
	Lo90   float64 `json:"lo90"`
	Hi90   float64 `json:"hi90"`
	Stars  int     `json:"stars"`
}

// Result is what Weigh inferred.
type Result struct {
	InferenceID int64 `json:"inference_id"`
	RunID       int64 `json:"run_id"`
	// EscapeSpeedKms is the escape speed at the Sun's position.
	EscapeSpeedKms Estimate `json:"escape_speed_kms"`
	// HaloMassTailMsun is M200 of the NFW halo that, with the campaign
	// model's bulge and disk, gives that escape speed; VCircKms the
	// circular speed at the Sun it implies.
	HaloMassTailMsun   Estimate `json:"halo_mass_tail_msun"`
	VCircKms           Estimate `json:"circular_speed_kms"`
	HaloMassOrbitsMsun Estimate `json:"halo_mass_orbits_msun"`
	// OrbitCandidates is how many candidate ejectees the orbit method
	// summed over; HaloMassOrbitsMsun.Stars counts those carrying it.
	OrbitCandidates int `json:"orbit_candidates"`
	// ModelHaloM200Msun is the campaign model's own halo, for comparison.
	ModelHaloM200Msun float64 `json:"model_halo_m200_msun"`
	// Excluded counts the run's stars no method considered, by reason.
	Excluded map[string]int64 `json:"excluded"`
	Notes    []string         `json:"notes,omitempty"`
}

func (o *Options) defaults() {
	if o.VMinKms <= 0 {
		o.VMinKms = DefaultVMinKms
	}
	if o.HaloRelKms <= 0 {
		o.HaloRelKms = DefaultHaloRelKms
	}
	if o.EjecteeMinKms <= 0 {
		o.EjecteeMinKms = DefaultEjecteeMinKms
	}
	if o.Draws <= 0 {
		o.Draws = DefaultDraws
	}
	if o.OutlierMax <= 0 {
		o.OutlierMax = DefaultOutlierMax
	}
}

// drawn is a candidate star with its draws again.
type drawn struct {
	cand db.KinematicCandidate
	star kinematics.Star // the kinematic input the draws were made from
	res  kinematics.Result
}

// Weigh runs both methods on run opt.RunID of the ledger l, made from
// campaign c, stores the inference in l and returns it. It refuses a run
// whose rule set or model differs from the campaign's now: the draws would
// not be the run's.
func Weigh(ctx context.Context, l *db.Ledger, c *campaign.Campaign, opt Options) (*Result, error) {
	opt.defaults()
	run, err := runOf(ctx, l, opt.RunID)
	if err != nil {
		return nil, err
	}
	info, err := vetting.RunInfo(c, opt.ToolVersion, "", false)
	if err != nil {
		return nil, err
	}
	if info.ModelHash != run.ModelHash || info.RulesetHash != run.RulesetHash {
		return nil, fmt.Errorf("ledger %s run %d was made with another rule set or model than campaign %s has now: its stars' draws cannot be made again", l.Path(), run.ID, c.File)
	}
	rs, err := vetting.LoadRules(c, "")
	if err != nil {
		return nil, err
	}
	model, _, err := vetting.Model(c)
	if err != nil {
		return nil, err
	}
	var cands []db.KinematicCandidate
	excluded, err := l.KinematicCandidates(ctx, run.ID, math.Min(tailCandidateFraction*opt.VMinKms, opt.EjecteeMinKms), func(k db.KinematicCandidate) error {
		cands = append(cands, k)
		return nil
	})
	if err != nil {
		return nil, err
	}
	set := vetting.KinematicSettings(c)
	// The tail model is the prior on the speed: draw from the measurement
	// errors alone (the flat prior), every draw, none stopped early.
	set.VelocityPriorKms, set.StopSigma, set.StopBelowP = 0, 0, 0
	set.KeepSamples = opt.Draws
	set.Samples = max(set.Samples, opt.Draws)
	stars := make([]kinematics.Star, len(cands))
	for k := range cands {
		stars[k] = vetting.KinematicInput(cands[k].Verdict.StarID, &cands[k].Inputs, cands[k].Failed, rs)
	}
	res, err := kinematics.EvaluateAll(ctx, stars, &set, model, opt.Workers, nil)
	if err != nil {
		return nil, err
	}
	ds := make([]drawn, len(cands))
	for k := range cands {
		ds[k] = drawn{cands[k], stars[k], res[k]}
	}
	out := &Result{RunID: run.ID, Excluded: excluded}
	inf := db.Inference{RunID: run.ID, ToolVersion: opt.ToolVersion, ModelHash: run.ModelHash}
	sun := c.Galaxy.Sun()
	sunPos := weigh.SunPositionKpc(sun)
	if err := tail(ds, model, sunPos, c.Potential.EscapeRadiusKpc, opt, out, &inf); err != nil {
		return nil, err
	}
	if err := orbits(ctx, ds, model, &set, c, opt, out, &inf); err != nil {
		return nil, err
	}
	if h, err := weigh.HaloOf(model); err == nil {
		out.ModelHaloM200Msun = h.M200Msun
	}
	settings, _ := json.Marshal(opt)
	exc, _ := json.Marshal(excluded)
	inf.SettingsJSON, inf.ExcludedJSON = string(settings), string(exc)
	if out.InferenceID, err = l.AddInference(ctx, inf); err != nil {
		return nil, err
	}
	return out, nil
}

func runOf(ctx context.Context, l *db.Ledger, id int64) (*db.Run, error) {
	if id == 0 {
		r, err := l.LastCompleteRun(ctx)
		if err != nil {
			return nil, err
		}
		if r == nil {
			return nil, fmt.Errorf("ledger %s has no complete run", l.Path())
		}
		return r, nil
	}
	r, err := l.Run(ctx, id)
	if err != nil {
		return nil, err
	}
	if r.State != "complete" {
		return nil, fmt.Errorf("ledger %s run %d is %s, not complete", l.Path(), id, r.StateText())
	}
	return r, nil
}

// rotationDir is the direction of circular rotation at pos: +y at the
// Sun's position (-R0, 0) in galaxy/frames' frame.
func rotationDir(pos [3]float64) [3]float64 {
	r := math.Hypot(pos[0], pos[1])
	if r == 0 {
		return [3]float64{}
	}
	return [3]float64{pos[1] / r, -pos[0] / r, 0}
}

func norm(v [3]float64) float64 { return math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2]) }
