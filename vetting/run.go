package vetting

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"starvet/crossmatch/catalog"
	"starvet/db"
	"starvet/quality"
	"starvet/rules"
	"starvet/vetting/campaign"
	"starvet/vetting/kinematics"
	"starvet/vetting/orbit"
	"starvet/vetting/potential"
)

// RunOptions tune Run.
type RunOptions struct {
	LedgerPath    string        // "" : the campaign's ledger
	Full          bool          // recompute every star
	Strict        bool          // the first bad input row is fatal
	RulesOverride string        // a rule-set path replacing the campaign's
	LockWait      time.Duration // how long to wait for a busy ledger (0: the db default)
}

// Summary is what a run did, for printing.
type Summary struct {
	RunID       int64
	LedgerPath  string
	PrevRunID   int64 // last complete run before this one, 0 if none
	Counts      map[string]int
	Transitions map[string]int // "old -> new" for stars whose status changed; "(new) -> s" for new stars
	Catalogs    []db.CatalogRow
	Quarantined int
	Computed    int
	Carried     int
	// RecomputeAll says why every star was recomputed ("" for an
	// incremental run).
	RecomputeAll string
	ModelName    string
	Elapsed      time.Duration
}

// Model returns the campaign's Galactic potential: its own components when
// it lists any, else the named (or default) built-in model.
func Model(c *campaign.Campaign) (*potential.Model, string, error) {
	if len(c.Potential.Components) > 0 {
		cs := make([]potential.Component, len(c.Potential.Components))
		for i, x := range c.Potential.Components {
			cs[i] = potential.Component{Kind: x.Kind, MassMsun: x.MassMsun, ScaleKpc: x.ScaleKpc, AKpc: x.AKpc, BKpc: x.BKpc}
		}
		m, err := potential.New(cs)
		if err != nil {
			return nil, "", fmt.Errorf("campaign %s: [potential]: %w", c.File, err)
		}
		return m, "campaign-components", nil
	}
	name := c.Potential.Model
	if name == "" {
		name = potential.DefaultModel
	}
	m, err := potential.Builtin(name)
	if err != nil {
		return nil, "", fmt.Errorf("campaign %s: [potential]: %w", c.File, err)
	}
	return m, name, nil
}

// KinematicSettings maps the campaign onto the Monte Carlo settings.
func KinematicSettings(c *campaign.Campaign) kinematics.Settings {
	k := c.Kinematics
	return kinematics.Settings{
		Distance:             k.Distance,
		EDSDLengthKpc:        k.EDSDLengthKpc,
		MinParallaxOverError: k.MinParallaxOverError,
		ParallaxZeroPointMas: c.ParallaxZeroPointMas,
		Samples:              k.Samples,
		Seed:                 uint64(c.Seed),
		Sun:                  c.Galaxy.Sun(),
		EscapeRadiusKpc:      c.Potential.EscapeRadiusKpc,
		KeepSamples:          k.TraceSamples,
	}
}

// Run is the main job: ingest, match, quality, kinematics, verdicts and the
// ledger. Stars whose inputs, rule set and model settings are unchanged since
// the last complete run are carried forward.
func (e *Engine) Run(ctx context.Context, c *campaign.Campaign, opt RunOptions) (sum *Summary, err error) {
	t0 := time.Now()
	ledgerPath := opt.LedgerPath
	if ledgerPath == "" {
		ledgerPath = c.Ledger
	}
	rs, err := LoadRules(c, opt.RulesOverride)
	if err != nil {
		return nil, err
	}
	model, modelName, err := Model(c)
	if err != nil {
		return nil, err
	}
	kset := KinematicSettings(c)
	if err := kset.Validate(); err != nil {
		return nil, fmt.Errorf("campaign %s: [kinematics]: %w", c.File, err)
	}
	modelHash := c.ModelHash() + ":" + model.Fingerprint()

	l, err := db.Open(ctx, ledgerPath, db.Options{LockWait: opt.LockWait})
	if err != nil {
		return nil, err
	}
	defer l.Close()
	w, err := l.BeginRun(ctx, db.RunInfo{
		ToolVersion:  e.ToolVersion,
		CampaignHash: c.Hash(),
		RulesetHash:  rs.Fingerprint,
		ConfigHash:   c.Hash(),
		MatchHash:    c.MatchHash(),
		ModelHash:    modelHash,
		Seed:         c.Seed,
		Full:         opt.Full,
		Note:         "campaign " + c.File,
	})
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			// The run is marked failed; the next open would do it anyway.
			_ = w.Fail(context.WithoutCancel(ctx), err)
		}
	}()
	sum = &Summary{RunID: w.ID(), LedgerPath: ledgerPath, ModelName: modelName,
		Counts: map[string]int{}, Transitions: map[string]int{}}

	cats, err := e.Ingest(ctx, c, opt.Strict, filepath.Dir(ledgerPath))
	if err != nil {
		return nil, err
	}
	for k, rep := range cats.Reports {
		spec := cats.Specs[k]
		row := db.CatalogRow{Name: spec.Name, Release: spec.Release, File: spec.File, FileSHA256: rep.SHA256,
			RowsRead: int64(rep.RowsRead), RowsKept: int64(rep.RowsKept), RowsQuarantined: int64(len(rep.Quarantined)),
			Epoch: spec.EpochJyr, Role: string(spec.Role)}
		if err := w.AddCatalog(ctx, row); err != nil {
			return nil, err
		}
		sum.Catalogs = append(sum.Catalogs, row)
		q := make([]db.QuarantineRow, len(rep.Quarantined))
		for i, x := range rep.Quarantined {
			q[i] = db.QuarantineRow{Catalog: spec.Name, Line: x.Line, Column: x.Column, ColumnName: x.ColumnName, Value: x.Value, Reason: x.Reason}
		}
		if err := w.AddQuarantine(ctx, q); err != nil {
			return nil, err
		}
		sum.Quarantined += len(q)
	}

	m, err := e.Match(ctx, c, cats)
	if err != nil {
		return nil, err
	}
	stars, hashes, err := mergeAll(ctx, cats, m, e.Workers)
	if err != nil {
		return nil, err
	}

	prevRun, err := l.LastCompleteRun(ctx)
	if err != nil {
		return nil, err
	}
	prev := map[string]db.PrevStar{}
	if prevRun != nil {
		sum.PrevRunID = prevRun.ID
		if prev, err = l.PreviousState(ctx, prevRun.ID); err != nil {
			return nil, err
		}
	}
	switch {
	case prevRun == nil:
		sum.RecomputeAll = "first run of this ledger"
	case opt.Full:
		sum.RecomputeAll = "--full"
	case prevRun.RulesetHash != rs.Fingerprint:
		sum.RecomputeAll = "the rule set changed"
	case prevRun.ModelHash != modelHash:
		sum.RecomputeAll = "the model settings changed"
	}

	// Which stars to compute.
	var todo []int
	var carried []string
	for i, id := range cats.Primary.IDs {
		p, seen := prev[id]
		if sum.RecomputeAll == "" && seen && p.Status != StatusWithdrawn && p.InputHash == hashes[i] {
			carried = append(carried, id)
			sum.Counts[p.Status]++
			continue
		}
		todo = append(todo, i)
	}
	sum.Carried = len(carried)

	recs, err := e.compute(ctx, c, rs, model, modelName, &kset, cats, m, stars, hashes, todo)
	if err != nil {
		return nil, err
	}
	for i := range recs {
		st := recs[i].Verdict.Status
		sum.Counts[st]++
		if p, ok := prev[recs[i].StarID]; !ok {
			sum.Transitions["(new) -> "+st]++
		} else if p.Status != st {
			sum.Transitions[p.Status+" -> "+st]++
		}
	}
	// Withdrawn: in the previous run, absent now.
	present := make(map[string]struct{}, cats.Primary.Len())
	for _, id := range cats.Primary.IDs {
		present[id] = struct{}{}
	}
	var stillWithdrawn []string
	var gone []string
	for id, p := range prev {
		if _, ok := present[id]; ok {
			continue
		}
		if p.Status == StatusWithdrawn {
			stillWithdrawn = append(stillWithdrawn, id)
		} else {
			gone = append(gone, id)
		}
	}
	sort.Strings(gone)
	sort.Strings(stillWithdrawn)
	for _, id := range gone {
		recs = append(recs, db.StarRecord{StarID: id, Computed: true,
			Verdict: db.NewVerdictRow(StatusWithdrawn),
			Reasons: []db.ReasonRow{{RuleID: "withdrawn", Outcome: "info", Value: math.NaN(),
				Message: fmt.Sprintf("absent from the primary catalog %s (release %s); status in run %d was %s",
					cats.Primary.Name, cats.Primary.Release, prevRun.ID, prev[id].Status)}}})
		sum.Transitions[prev[id].Status+" -> "+StatusWithdrawn]++
		sum.Counts[StatusWithdrawn]++
	}
	if len(stillWithdrawn) > 0 {
		sum.Counts[StatusWithdrawn] += len(stillWithdrawn)
	}
	sum.Carried += len(stillWithdrawn)
	carried = append(carried, stillWithdrawn...)

	// Star-id order keeps each batch's index updates local in the ledger.
	sort.Slice(recs, func(a, b int) bool { return recs[a].StarID < recs[b].StarID })
	const batch = 20000
	st := begin(e.Progress, "ledger", len(recs))
	for lo := 0; lo < len(recs); lo += batch {
		if err := w.AddStars(ctx, recs[lo:min(lo+batch, len(recs))]); err != nil {
			st.End()
			return nil, err
		}
		st.Set(min(lo+batch, len(recs)))
	}
	st.End()
	if len(carried) > 0 {
		n, err := w.CarryForwardRest(ctx, prevRun.ID)
		if err != nil {
			return nil, err
		}
		if n != int64(len(carried)) {
			return nil, fmt.Errorf("ledger %s run %d: carried %d verdicts forward from run %d, expected %d", ledgerPath, w.ID(), n, prevRun.ID, len(carried))
		}
	}
	counts := make(map[string]int64, len(sum.Counts))
	for k, v := range sum.Counts {
		counts[k] = int64(v)
	}
	if err := w.Finish(ctx, db.RunSummary{
		StarsTotal:      int64(len(recs) + len(carried)),
		StarsComputed:   int64(len(recs)),
		StarsCarried:    int64(len(carried)),
		RowsQuarantined: int64(sum.Quarantined),
		Counts:          counts,
	}); err != nil {
		return nil, err
	}
	sum.Computed = len(recs)
	sum.Elapsed = time.Since(t0)
	return sum, nil
}

// compute runs quality, kinematics and tracing for the primary rows todo and
// returns their ledger records in row order.
func (e *Engine) compute(ctx context.Context, c *campaign.Campaign, rs *rules.RuleSet, model *potential.Model, modelName string,
	kset *kinematics.Settings, cats *Catalogs, m *Matched, stars []quality.Star, hashes []string, todo []int) ([]db.StarRecord, error) {
	sub := make([]quality.Star, len(todo))
	for k, i := range todo {
		sub[k] = stars[i]
	}
	st := begin(e.Progress, "quality", len(sub))
	as, err := e.Assess(ctx, c, rs, sub)
	st.End()
	if err != nil {
		return nil, err
	}
	recs := make([]db.StarRecord, len(todo))
	var kin []int // indexes into todo of stars that passed the cuts
	for k, i := range todo {
		recs[k] = e.baseRecord(cats, m, &sub[k], hashes[i], i, &as[k])
		if as[k].Quality != "reject" {
			kin = append(kin, k)
			voidFields(rs, &as[k], &sub[k], &recs[k])
		}
	}
	if err := e.kinematics(ctx, c, model, modelName, kset, sub, kin, recs); err != nil {
		return nil, err
	}
	return recs, nil
}

// baseRecord holds a computed star's inputs, matches and rule outcomes, with
// status rejected when a reject rule failed.
func (e *Engine) baseRecord(cats *Catalogs, m *Matched, s *quality.Star, hash string, row int, a *quality.Assessment) db.StarRecord {
	r := db.StarRecord{StarID: s.ID, Computed: true}
	in := &db.InputRow{InputHash: hash, DupCount: s.DupCount}
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		in.Values[f-1] = s.Values[f]
	}
	r.Inputs = in
	for k, t := range cats.Secondaries {
		cp := &m.Results[k].Matches[row]
		if cp.Candidates == 0 && cp.Secondary < 0 {
			continue
		}
		mr := db.MatchRow{Catalog: t.Name, Candidates: int(cp.Candidates), Ambiguous: cp.Ambiguous,
			SepArcsec: math.NaN(), MatchProb: math.NaN()}
		if cp.Secondary >= 0 {
			mr.SourceID, mr.SepArcsec, mr.MatchProb = cp.SourceID, cp.SepArcsec, cp.Prob
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
	r.Verdict = db.VerdictRow{Quality: a.Quality, InputHash: hash, Status: StatusRejected}
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
func (e *Engine) kinematics(ctx context.Context, c *campaign.Campaign, model *potential.Model, modelName string,
	kset *kinematics.Settings, sub []quality.Star, kin []int, recs []db.StarRecord) error {
	k := c.Kinematics
	tset := orbit.TraceSettings{TraceMyr: k.TraceMyr, GCRadiusKpc: k.GCRadiusKpc, DiskRadiusKpc: k.DiskRadiusKpc}
	mc := begin(e.Progress, "monte carlo", len(kin))
	defer mc.End()
	in := make([]kinematics.Star, 0, kinematicsBatch)
	for lo := 0; lo < len(kin); lo += kinematicsBatch {
		idx := kin[lo:min(lo+kinematicsBatch, len(kin))]
		in = in[:0]
		for _, j := range idx {
			in = append(in, kinStar(&sub[j]))
		}
		res, err := kinematics.EvaluateAll(ctx, in, kset, model, e.Workers, nil)
		if err != nil {
			return err
		}
		mc.Set(lo + len(idx))
		var traces []orbit.TraceInput
		var traced []int
		for n := range idx {
			r := &res[n]
			if r.OK && r.HasRV && r.PUnbound >= k.TraceMinP {
				traces = append(traces, orbit.TraceInput{ID: r.ID, Pos: r.SamplePos, Vel: r.SampleVel})
				traced = append(traced, n)
			}
		}
		var tr []orbit.TraceResult
		if len(traces) > 0 {
			ts := begin(e.Progress, "tracing", len(traces))
			tr = orbit.TraceAll(ctx, model, traces, tset, e.Workers)
			ts.End()
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
			applyKinematics(&recs[j], &res[n], t, c, modelName)
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

// applyKinematics turns a Monte Carlo result (and a trace, for the fast
// stars) into the star's status, summary columns and kinematic reasons.
func applyKinematics(rec *db.StarRecord, r *kinematics.Result, t *orbit.TraceResult, c *campaign.Campaign, modelName string) {
	k := c.Kinematics
	v := &rec.Verdict
	v.DistanceMethod = r.Method
	v.HasRV = r.HasRV
	v.ModelName = modelName
	reason := func(id, outcome string, value float64, threshold, format string, a ...any) {
		rec.Reasons = append(rec.Reasons, db.ReasonRow{RuleID: id, Outcome: outcome, Severity: "", Value: value,
			Threshold: threshold, Message: fmt.Sprintf(format, a...)})
	}
	for _, x := range r.Reasons {
		out := "info"
		if x.Fatal {
			out = "fail"
		}
		reason("kinematics."+x.Code, out, math.NaN(), "", "%s", x.Message)
	}
	if !r.OK {
		v.Status = StatusRejected
		return
	}
	reason("kinematics.distance", "info", r.DistKpc[1], "", "distance %.3g kpc (16-50-84%%: %.3g, %.3g, %.3g) from method %q",
		r.DistKpc[1], r.DistKpc[0], r.DistKpc[1], r.DistKpc[2], r.Method)
	v.RGCKpc, v.VEscKms = r.RGCKpc[1], r.VEscKms[1]
	if !r.HasRV {
		v.Status = StatusNeedsRV
		v.SpeedLowerP50Kms, v.PUnboundLower = r.SpeedLowerKms[1], r.PUnboundLower
		reason("kinematics.needs-rv", "info", r.SpeedLowerKms[1], "", "no usable radial velocity: Galactocentric speed at least %.0f km/s (median over samples), %.2f of samples already unbound on that bound under model %s",
			r.SpeedLowerKms[1], r.PUnboundLower, modelName)
		return
	}
	v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms = r.SpeedKms[0], r.SpeedKms[1], r.SpeedKms[2]
	v.PUnbound = r.PUnbound
	switch {
	case r.PUnbound >= k.UnboundP:
		v.Status = StatusUnbound
		reason("kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf(">= %g", k.UnboundP),
			"p_unbound %.3f >= %g under model %s: speed %.0f (+%.0f/-%.0f) km/s against escape speed %.0f km/s; a candidate for follow-up, not a discovery",
			r.PUnbound, k.UnboundP, modelName, r.SpeedKms[1], r.SpeedKms[2]-r.SpeedKms[1], r.SpeedKms[1]-r.SpeedKms[0], r.VEscKms[1])
	case r.PUnbound >= k.MarginalP:
		v.Status = StatusMarginal
		reason("kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf(">= %g and < %g", k.MarginalP, k.UnboundP),
			"p_unbound %.3f between %g and %g under model %s: speed %.0f km/s against escape speed %.0f km/s",
			r.PUnbound, k.MarginalP, k.UnboundP, modelName, r.SpeedKms[1], r.VEscKms[1])
	default:
		v.Status = StatusBound
		reason("kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf("< %g", k.MarginalP),
			"p_unbound %.3f < %g under model %s: speed %.0f km/s against escape speed %.0f km/s",
			r.PUnbound, k.MarginalP, modelName, r.SpeedKms[1], r.VEscKms[1])
	}
	if t != nil {
		v.Origin, v.PGCOrigin, v.GCConsistency, v.FlightTimeMyr = t.Origin, t.PGCOrigin, t.GCConsistency, t.FlightTimeMyr
		rec.Crossings = make([]db.CrossingRow, len(t.Crossings))
		for i, c := range t.Crossings {
			rec.Crossings[i] = db.CrossingRow{XKpc: c.XKpc, YKpc: c.YKpc, TMyr: c.TMyr}
		}
		reason("kinematics.origin", "info", t.GCConsistency, "<= 0.95",
			"origin %s: the centre lies at containment level %.3f of the plane crossings (%d of %d samples crossed within %g Myr; %.2f within %g kpc of the centre; flight time %.0f Myr)",
			t.Origin, t.GCConsistency, len(t.Crossings), t.Samples, k.TraceMyr, t.PGCOrigin, k.GCRadiusKpc, t.FlightTimeMyr)
	}
}
