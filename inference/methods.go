package inference

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
	"starvet/galaxy/weigh"
)

// tail fits the escape speed at the Sun to the tail of the speed
// distribution and maps it to the NFW halo's M200.
func tail(ds []drawn, model *potential.Model, sunPos [3]float64, escapeRadiusKpc float64, opt Options, out *Result, inf *db.Inference) error {
	var stars []weigh.TailStar
	for _, d := range ds {
		v := &d.cand.Verdict
		use := func(used bool, format string, a ...any) {
			inf.Stars = append(inf.Stars, db.InferenceStar{Method: MethodTail, StarID: v.StarID, Used: used, Reason: fmt.Sprintf(format, a...)})
		}
		if !d.res.OK || len(d.res.SamplePos) == 0 {
			use(false, "no Monte Carlo draws (the star's kinematics failed when drawn again)")
			continue
		}
		// The sample is cut on the median of the draws the fit uses (flat
		// prior), not on the run's median, which the campaign's velocity
		// prior shrinks: cut on that, a poorly measured star just above
		// v_min falls below it more often than a star far above, which
		// thins the tail near v_min and biases v_esc upward.
		if sp := d.res.SpeedKms[1]; !(sp >= opt.VMinKms) {
			use(false, "median speed %.0f km/s (flat prior) is below v_min %g km/s", sp, opt.VMinKms)
			continue
		}
		rel := relativeToRotation(model, d.res.PosKpc, d.res.VelKms)
		if rel < opt.HaloRelKms {
			use(false, "moves with the disk: %.0f km/s relative to circular rotation, below %g km/s", rel, opt.HaloRelKms)
			continue
		}
		if opt.InfallOnly {
			if vr := radialVelocity(d.res.PosKpc, d.res.VelKms); vr >= 0 {
				use(false, "moves away from the Galactic Centre (%.0f km/s): only infalling stars enter, and no centre ejectee falls in", vr)
				continue
			}
		}
		ts, err := weigh.NewTailStar(v.StarID, d.res.SamplePos, d.res.SampleVel, model, sunPos, escapeRadiusKpc)
		if err != nil {
			return err
		}
		stars = append(stars, ts)
		use(true, "median speed %.0f km/s, %.0f km/s relative to circular rotation", v.SpeedP50Kms, rel)
	}
	if len(stars) == 0 {
		out.Notes = append(out.Notes, "no star entered the velocity-tail fit")
		return nil
	}
	to := weigh.DefaultTailOptions()
	to.VMinKms, to.Workers = opt.VMinKms, opt.Workers
	to.OutlierMax, to.OutlierSteps = opt.OutlierMax, outlierSteps
	if opt.KPriorLow {
		to.KMin, to.KMax = weigh.KMinDeason, weigh.KMaxDeason
	}
	fit, err := weigh.FitTail(stars, to)
	if err != nil {
		return err
	}
	out.EscapeSpeedKms = estimate(fit.VEscKms, fit.Stars)
	cv := curvesOf(inf)
	cv.VMinKms, cv.KMedian = opt.VMinKms, fit.K.Median
	cv.VEscGridKms, cv.VEscPosterior = fit.GridVEscKms, fit.Posterior
	for _, st := range stars {
		cv.TailSpeedsKms = append(cv.TailSpeedsKms, median(st.SpeedKms))
	}
	if fit.AtGridTop {
		out.Notes = append(out.Notes, fmt.Sprintf("the escape-speed posterior reaches the top of its grid (%g km/s)", to.VEscMaxKms))
	}
	inf.Results = append(inf.Results, result(MethodTail, "escape_speed_kms", fit.VEscKms, fit.Stars, ""),
		result(MethodTail, "k", fit.K, fit.Stars, "the tail's power-law slope"))
	conv, convText := weigh.EscapeToInfinity, "escape to infinity"
	if opt.Escape2R200 {
		conv, convText = weigh.EscapeTo2R200, "escape to 2 r200"
	}
	m200, vc, err := weigh.MassFromTail(model, sunPos, fit.VEscKms, conv)
	if err != nil {
		out.Notes = append(out.Notes, "no halo mass from the tail: "+err.Error())
		return nil
	}
	out.HaloMassTailMsun, out.VCircKms = estimate(m200, fit.Stars), estimate(vc, fit.Stars)
	// The M200 of every grid node that carries posterior weight, for the
	// posterior's plot in M200 (the map is monotonic).
	peak := 0.0
	for _, p := range fit.Posterior {
		peak = max(peak, p)
	}
	cv.M200GridMsun = make([]float64, len(fit.GridVEscKms))
	for i, v := range fit.GridVEscKms {
		if fit.Posterior[i] < 1e-4*peak {
			continue
		}
		if h, err := weigh.M200ForEscape(model, sunPos, v, conv); err == nil {
			cv.M200GridMsun[i] = h.M200Msun
		}
	}
	inf.Results = append(inf.Results, result(MethodTail, "halo_m200_msun", m200, fit.Stars, "NFW halo, Dutton & Maccio 2014 concentration, "+convText),
		result(MethodTail, "circular_speed_kms", vc, fit.Stars, "at the Sun"))
	return nil
}

// orbits fits the halo scale under which candidate ejectees trace back to
// the centre and reports it as M200.
func orbits(ctx context.Context, ds []drawn, model *potential.Model, set *kinematics.Settings, c *campaign.Campaign, opt Options, out *Result, inf *db.Inference) error {
	var stars []weigh.OrbitStar
	var ids []string
	for _, d := range ds {
		v := &d.cand.Verdict
		if v.SpeedP50Kms < opt.EjecteeMinKms {
			inf.Stars = append(inf.Stars, db.InferenceStar{Method: MethodOrbits, StarID: v.StarID,
				Reason: fmt.Sprintf("median speed %.0f km/s is below %g km/s", v.SpeedP50Kms, opt.EjecteeMinKms)})
			continue
		}
		if !d.res.OK || len(d.res.SamplePos) == 0 {
			inf.Stars = append(inf.Stars, db.InferenceStar{Method: MethodOrbits, StarID: v.StarID, Reason: "no Monte Carlo draws"})
			continue
		}
		pos, vel := d.res.SamplePos, d.res.SampleVel
		if n := opt.OrbitDraws; n > 0 && n < len(pos) {
			pos, vel = pos[:n], vel[:n]
		}
		st := weigh.OrbitStar{ID: v.StarID, PosKpc: pos, VelKms: vel,
			VelMeanKms: make([][3]float64, len(pos)), VelCovKms2: make([][3][3]float64, len(pos))}
		ok := true
		for j, x := range pos {
			st.VelMeanKms[j], st.VelCovKms2[j], ok = kinematics.VelocityLaw(&d.star, set, x)
			if !ok {
				break
			}
		}
		if !ok {
			inf.Stars = append(inf.Stars, db.InferenceStar{Method: MethodOrbits, StarID: v.StarID, Reason: "no Gaussian law of its velocity (proper-motion or rv errors unusable)"})
			continue
		}
		stars = append(stars, st)
		ids = append(ids, v.StarID)
	}
	if len(stars) == 0 {
		out.Notes = append(out.Notes, "no fast star for the orbit method")
		return nil
	}
	k := c.Kinematics
	// The ejection model is the one the invented scenarios fly
	// (weigh.DefaultEjection): the mass is conditional on it.
	ej := weigh.DefaultEjection
	fit, err := weigh.FitOrbits(ctx, model, stars, weigh.OrbitOptions{Workers: opt.Workers,
		Trace: orbit.TraceSettings{TraceMyr: k.TraceMyr, GCRadiusKpc: k.GCRadiusKpc, DiskRadiusKpc: k.DiskRadiusKpc},
		Score: weigh.ScoreEjection, Ejection: &ej, SelectMinSpeedKms: opt.EjecteeMinKms})
	if errors.Is(err, weigh.ErrNoEjectees) {
		for _, id := range ids {
			inf.Stars = append(inf.Stars, db.InferenceStar{Method: MethodOrbits, StarID: id, Reason: "its crossings exclude the centre under every halo of the grid"})
		}
		out.Notes = append(out.Notes, "no candidate Galactic-Centre ejectee for the orbit method")
		return nil
	}
	if err != nil {
		return err
	}
	for i, id := range ids {
		reason := "its crossings exclude the centre under every halo of the grid"
		switch {
		case fit.Selected[i]:
			reason = "candidate Galactic-Centre ejectee; " + carriage(fit, i)
		case fit.Far[i]:
			reason = fmt.Sprintf("lies beyond %g kpc from the centre, where the assumed ejection model's flight window could end", weigh.DefaultOrbitMaxRadiusKpc)
		}
		inf.Stars = append(inf.Stars, db.InferenceStar{Method: MethodOrbits, StarID: id, Used: fit.Selected[i], Reason: reason})
	}
	mass := func(scale float64) (float64, error) {
		m, err := weigh.ScaleHalo(model, scale)
		if err != nil {
			return 0, err
		}
		h, err := weigh.HaloOf(m)
		return h.M200Msun, err
	}
	var iv weigh.Interval
	for _, p := range []struct {
		scale float64
		dst   *float64
	}{{fit.Best, &iv.Median}, {fit.Lo68, &iv.Lo68}, {fit.Hi68, &iv.Hi68}, {fit.Lo90, &iv.Lo90}, {fit.Hi90, &iv.Hi90}} {
		if *p.dst, err = mass(p.scale); err != nil {
			return err
		}
	}
	out.HaloMassOrbitsMsun, out.OrbitCandidates = estimate(iv, fit.Carrying), fit.Stars
	cv := curvesOf(inf)
	for k, sc := range fit.Scales {
		m, err := mass(sc)
		if err != nil {
			return err
		}
		cv.OrbitM200Msun = append(cv.OrbitM200Msun, m)
		cv.OrbitLogLike = append(cv.OrbitLogLike, fit.LogLike[k])
	}
	note := fmt.Sprintf("profile likelihood over the model's halo scaled %.2g to %.2g times (%d points), conditional on the assumed ejection model (%s), each star's velocity density given its position normalised over speeds >= %g km/s; maximum at %.3g, Wilks intervals",
		fit.Scales[0], fit.Scales[len(fit.Scales)-1], len(fit.Scales), ej, opt.EjecteeMinKms, fit.Best)
	if fit.AtEdge || fit.Open68 || fit.Open90 {
		note += "; the maximum or an interval reaches the grid's edge"
		out.Notes = append(out.Notes, "the orbit method's likelihood reaches the edge of its halo grid: the interval is open there")
	}
	inf.Results = append(inf.Results, result(MethodOrbits, "halo_m200_msun", iv, fit.Carrying, note))
	return nil
}

// curvesOf returns inf's curves, made when missing.
func curvesOf(inf *db.Inference) *db.InferenceCurves {
	if inf.Curves == nil {
		inf.Curves = &db.InferenceCurves{}
	}
	return inf.Curves
}

// median of xs (a copy is sorted).
func median(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	n := len(s)
	if n == 0 {
		return math.NaN()
	}
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// relativeToRotation is the speed of (pos, vel) relative to circular
// rotation in model at pos's cylindrical radius.
func relativeToRotation(model *potential.Model, pos, vel [3]float64) float64 {
	dir := rotationDir(pos)
	vc := model.CircularVelocity(hypot2(pos))
	return norm([3]float64{vel[0] - vc*dir[0], vel[1] - vc*dir[1], vel[2] - vc*dir[2]})
}

// radialVelocity is the Galactocentric radial velocity of (pos, vel).
func radialVelocity(pos, vel [3]float64) float64 {
	r := norm(pos)
	if r == 0 {
		return 0
	}
	return (pos[0]*vel[0] + pos[1]*vel[1] + pos[2]*vel[2]) / r
}

func hypot2(p [3]float64) float64 { return norm([3]float64{p[0], p[1], 0}) }

func estimate(iv weigh.Interval, stars int) Estimate {
	return Estimate{Median: iv.Median, Lo68: iv.Lo68, Hi68: iv.Hi68, Lo90: iv.Lo90, Hi90: iv.Hi90, Stars: stars}
}

func result(method, parameter string, iv weigh.Interval, stars int, note string) db.InferenceResult {
	return db.InferenceResult{Method: method, Parameter: parameter, Median: iv.Median, Lo68: iv.Lo68, Hi68: iv.Hi68,
		Lo90: iv.Lo90, Hi90: iv.Hi90, Stars: stars, Note: note}
}

// carriedPhrase marks, in an orbit star's reason, a star that carries the
// fit (weigh.OrbitResult.Carries).
const carriedPhrase = "it carries the fit"

// carriage says how much selected star i's ln L varies over the halo grid
// and where it is highest: the stars that carry the orbit fit are few,
// and an artefact among them is what an audit looks for.
func carriage(fit *weigh.OrbitResult, i int) string {
	swing, best := fit.Swing(i)
	verdict := "it does not carry the fit"
	if fit.Carries(i) {
		verdict = carriedPhrase
	}
	return fmt.Sprintf("ln L varies by %.2f over the halo grid, highest at %.3g times the model's halo: %s", swing, best, verdict)
}
