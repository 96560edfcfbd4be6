package vetting

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"starvet/catalog"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/orbit"
	"starvet/quality"
	"starvet/rules"
	"starvet/verdict"
)

// runInput is the run's matched input: the catalogs, their cross-matches
// and the input hash of every primary row.
type runInput struct {
	cats    *Catalogs
	matched *Matched
	hashes  []string
}

// compute runs quality, kinematics and tracing for the primary rows todo and
// returns their ledger records in row order.
func (e *Engine) compute(ctx context.Context, s *runSettings, in *runInput, todo []int,
	recs []db.StarRecord, sum *Summary) ([]db.StarRecord, error) {
	t := time.Now()
	sub := make([]quality.Star, len(todo))
	mergeRows(in.cats, in.matched, todo, sub)
	sum.addStage("merge computed", t)
	t = time.Now()
	as, err := e.Assess(ctx, s.campaign, s.rules, sub)
	sum.addStage("quality", t)
	if err != nil {
		return nil, err
	}
	recs = slices.Grow(recs[:0], len(todo))[:len(todo)]
	var kin []int // indexes into todo of stars that passed the cuts
	for k, i := range todo {
		recs[k] = baseRecord(in, &sub[k], i, &as[k])
		if as[k].Quality != "reject" {
			kin = append(kin, k)
			voidFields(s.rules, &as[k], &sub[k], &recs[k])
		}
	}
	if err := e.kinematics(ctx, s, sub, kin, recs, sum); err != nil {
		return nil, err
	}
	return recs, nil
}

// baseRecord holds a computed star's inputs, matches and rule outcomes, with
// status rejected when a reject rule failed.
func baseRecord(in *runInput, s *quality.Star, row int, a *quality.Assessment) db.StarRecord {
	hash := in.hashes[row]
	r := db.StarRecord{StarID: s.ID}
	inputs := &db.InputRow{InputHash: hash, DupCount: s.DupCount}
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		inputs.Values[f-1] = s.Values[f]
	}
	r.Inputs = inputs
	for k, t := range in.cats.Secondaries {
		cp := &in.matched.Results[k].Matches[row]
		if cp.Candidates == 0 && cp.Secondary < 0 {
			continue
		}
		mr := db.MatchRow{Catalog: t.Name, Candidates: int(cp.Candidates), Ambiguous: cp.Ambiguous,
			SepArcsec: math.NaN(), MatchProb: math.NaN()}
		if cp.Secondary >= 0 {
			mr.CounterpartID, mr.SepArcsec, mr.MatchProb = cp.CounterpartID, cp.SepArcsec, cp.Prob
		}
		r.Matches = append(r.Matches, mr)
	}
	for _, o := range a.Outcomes {
		if o.Result == "pass" {
			continue
		}
		r.Reasons = append(r.Reasons, db.ReasonRow{RuleID: o.RuleID, Outcome: o.Result, Severity: o.Severity,
			Value: o.Value, Threshold: o.Threshold, Message: o.Message})
	}
	r.Verdict = db.VerdictRow{Quality: a.Quality, InputHash: hash, Status: string(verdict.Rejected)}
	nanVerdict(&r.Verdict)
	return r
}

// voidFields blanks, in the star's kinematic input, the fields that failed
// rules declare void (for example a radial velocity from a low
// signal-to-noise spectrum), and says so among its reasons. The ledger's
// inputs keep the measured values.
func voidFields(rs *rules.RuleSet, a *quality.Assessment, s *quality.Star, rec *db.StarRecord) {
	for i, o := range a.Outcomes {
		r := rs.Rules[i]
		if o.Result != quality.ResultFail || len(r.Voids) == 0 {
			continue
		}
		var names []string
		for _, f := range r.Voids {
			if !math.IsNaN(s.Values[f]) {
				s.Values[f] = math.NaN()
				names = append(names, catalog.Fields[f].Name)
			}
		}
		if len(names) > 0 {
			rec.Reasons = append(rec.Reasons, db.ReasonRow{RuleID: "void." + r.ID, Outcome: "info", Value: math.NaN(),
				Message: fmt.Sprintf("%s not used for the kinematics because rule %s failed", strings.Join(names, ", "), r.ID)})
		}
	}
}

func nanVerdict(v *db.VerdictRow) {
	nan := math.NaN()
	v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms, v.SpeedLowerP50Kms = nan, nan, nan, nan
	v.RGCKpc, v.VEscKms, v.PUnbound, v.PUnboundLower = nan, nan, nan, nan
	v.PGCOrigin, v.GCConsistency, v.FlightTimeMyr = nan, nan, nan
}

// kinematicsBatch bounds the memory held by the Monte Carlo samples kept for
// tracing.
const kinematicsBatch = 4096

// kinematics computes the Galactic rest-frame verdict of the stars sub[kin]
// and traces the fast ones back, in batches.
func (e *Engine) kinematics(ctx context.Context, s *runSettings, sub []quality.Star, kin []int, recs []db.StarRecord, sum *Summary) error {
	t0 := time.Now()
	defer sum.addStage("monte carlo", t0)
	in := make([]kinematics.Star, 0, kinematicsBatch)
	for lo := 0; lo < len(kin); lo += kinematicsBatch {
		idx := kin[lo:min(lo+kinematicsBatch, len(kin))]
		in = in[:0]
		for _, j := range idx {
			in = append(in, kinStar(&sub[j]))
		}
		res, err := kinematics.EvaluateAll(ctx, in, &s.kin, s.model, e.Workers, nil)
		if err != nil {
			return err
		}
		var traces []orbit.TraceInput
		var traced []int
		for n := range idx {
			r := &res[n]
			if r.OK && r.HasRV && r.PUnbound >= s.campaign.Kinematics.TraceMinP {
				traces = append(traces, orbit.TraceInput{ID: r.ID, Pos: r.SamplePos, Vel: r.SampleVel})
				traced = append(traced, n)
			}
		}
		var tr []orbit.TraceResult
		if len(traces) > 0 {
			t := time.Now()
			tr = orbit.TraceAll(ctx, s.model, traces, s.trace, e.Workers)
			sum.addStage("tracing", t)
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		ti := 0
		for n, j := range idx {
			var t *orbit.TraceResult
			if ti < len(traced) && traced[ti] == n {
				t = &tr[ti]
				ti++
			}
			applyKinematics(&recs[j], &res[n], t, s)
		}
	}
	return nil
}

func kinStar(s *quality.Star) kinematics.Star {
	v := &s.Values
	return kinematics.Star{
		ID: s.ID, RADeg: v[catalog.RA], DecDeg: v[catalog.Dec],
		ParallaxMas: v[catalog.Parallax], ParallaxErrMas: v[catalog.ParallaxErr],
		PMRAMasYr: v[catalog.PMRA], PMRAErrMasYr: v[catalog.PMRAErr],
		PMDecMasYr: v[catalog.PMDec], PMDecErrMasYr: v[catalog.PMDecErr],
		CorrParallaxPMRA: v[catalog.CorrParallaxPMRA], CorrParallaxPMDec: v[catalog.CorrParallaxPMDec],
		CorrPMRAPMDec: v[catalog.CorrPMRAPMDec],
		RVKms:         v[catalog.RV], RVErrKms: v[catalog.RVErr],
		DistKpc: v[catalog.Distance], DistErrKpc: v[catalog.DistanceErr],
		DistMod: v[catalog.DistMod], DistModErr: v[catalog.DistModErr],
	}
}
