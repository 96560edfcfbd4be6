package vetting

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"runtime"
	"slices"

	"strings"
	"time"

	"starvet/campaign"
	"starvet/catalog"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
	"starvet/quality"
	"starvet/rules"
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
	// Stages is the wall time of the stages Run times itself: "merge"
	// (the input hash of every star), "merge computed" (merging the stars
	// to compute again, within the vetting stage),
	// "previous-state" (read concurrently with ingest and match),
	// "previous-wait" (how long the run then waited for it), "quality",
	// "monte carlo", "tracing" (within "monte carlo"), "ledger" (the
	// batch writes, concurrent with quality and Monte Carlo),
	// and "finish".
	Stages map[string]time.Duration
}

func (s *Summary) addStage(name string, since time.Time) { s.Stages[name] += time.Since(since) }

func (s *Summary) addDuration(name string, d time.Duration) { s.Stages[name] += d }

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
		Distance:                k.Distance,
		EDSDLengthKpc:           k.EDSDLengthKpc,
		MinParallaxSignificance: k.MinParallaxSignificance,
		ParallaxZeroPointMas:    c.ParallaxZeroPointMas,
		Samples:                 k.Samples,
		Seed:                    uint64(c.Seed),
		Sun:                     c.Galaxy.Sun(),
		EscapeRadiusKpc:         c.Potential.EscapeRadiusKpc,
		KeepSamples:             k.TraceSamples,
		VelocityPriorKms:        k.VelocityPriorKms,
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
	settings, err := recordedSettings(c, rs, model, modelName)
	if err != nil {
		return nil, err
	}
	w, err := l.BeginRun(ctx, db.RunInfo{
		ToolVersion:  e.ToolVersion,
		CampaignHash: c.Hash(),
		RulesetHash:  rs.Fingerprint,
		MatchHash:    c.MatchHash(),
		ModelHash:    modelHash,
		Seed:         c.Seed,
		Full:         opt.Full,
		Note:         "campaign " + c.File,
		Settings:     settings,
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
		Counts: map[string]int{}, Transitions: map[string]int{}, Stages: map[string]time.Duration{}}

	// The previous run's state needs only the ledger: read it while the
	// catalogs are ingested and matched.
	prevRun, err := l.LastCompleteRun(ctx)
	if err != nil {
		return nil, err
	}
	type prevState struct {
		m   *db.PrevSet
		err error
		d   time.Duration
	}
	prevDone := make(chan prevState, 1)
	prevWaited := false
	if prevRun == nil {
		prevDone <- prevState{m: &db.PrevSet{}}
	} else {
		sum.PrevRunID = prevRun.ID
		prevCtx, cancelPrev := context.WithCancel(ctx)
		defer func() {
			cancelPrev()
			if !prevWaited {
				<-prevDone // the reader ends before the ledger is closed
			}
		}()
		go func() {
			t := time.Now()
			m, err := l.PreviousState(prevCtx, prevRun.ID)
			prevDone <- prevState{m: m, err: err, d: time.Since(t)}
		}()
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
	cats, err := e.Ingest(ctx, c, opt.Strict, filepath.Dir(ledgerPath))
	if err != nil {
		return nil, err
	}
	// Primary rows in star id order, sorted while the catalogs are matched.
	orderDone := make(chan []int32, 1)
	go func() { orderDone <- idOrder(cats.Primary.IDs) }()
	m, err := e.Match(ctx, c, cats)
	if err != nil {
		return nil, err
	}
	t := time.Now()
	hashes, err := hashAll(ctx, cats, m, e.Workers)
	if err != nil {
		return nil, err
	}
	sum.addStage("merge", t)

	t = time.Now()
	ps := <-prevDone
	prevWaited = true
	if ps.err != nil {
		return nil, ps.err
	}
	sum.addStage("previous-wait", t)
	sum.addDuration("previous-state", ps.d)
	prev := ps.m
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

	// Which stars to compute: walk the primary rows in star id order beside
	// the previous run's set, which the ledger gives in that order.
	ids := cats.Primary.IDs
	order := <-orderDone
	var todo []int             // primary rows to compute, in id order
	var gone []string          // withdrawn now, in id order
	was := map[string]string{} // previous status of the stars computed or withdrawn now
	carried := 0
	k := 0
	absent := func(k int) {
		if p := prev.Stars[k]; p.Status == StatusWithdrawn {
			carried++
			sum.Counts[StatusWithdrawn]++
		} else {
			gone = append(gone, prev.IDs[k])
			was[prev.IDs[k]] = p.Status
		}
	}
	for _, i := range order {
		id := ids[i]
		for ; k < prev.Len() && prev.IDs[k] < id; k++ {
			absent(k)
		}
		if k < prev.Len() && prev.IDs[k] == id {
			p := prev.Stars[k]
			k++
			if sum.RecomputeAll == "" && p.Status != StatusWithdrawn && p.InputHash == hashes[i] {
				carried++
				sum.Counts[p.Status]++
				continue
			}
			was[id] = p.Status
		}
		todo = append(todo, int(i))
	}
	for ; k < prev.Len(); k++ {
		absent(k)
	}
	sum.Carried = carried

	withdrawn := func(id string) db.StarRecord {
		return db.StarRecord{StarID: id,
			Verdict: db.NewVerdictRow(StatusWithdrawn),
			Reasons: []db.ReasonRow{{RuleID: "withdrawn", Outcome: "info", Value: math.NaN(),
				Message: fmt.Sprintf("absent from the primary catalog %s (release %s); status in run %d was %s",
					cats.Primary.Name, cats.Primary.Release, prevRun.ID, was[id])}}}
	}
	computed := 0
	err = e.computeAndWrite(ctx, w, len(todo)+len(gone), sum, func(ctx context.Context, ce *Engine, recs []db.StarRecord) ([]db.StarRecord, bool, error) {
		// The next batch: up to ledgerBatch stars in id order, from todo
		// and gone merged.
		var part []int
		var partGone []string
		for len(part)+len(partGone) < ledgerBatch && (len(todo) > 0 || len(gone) > 0) {
			if len(gone) == 0 || (len(todo) > 0 && ids[todo[0]] < gone[0]) {
				part, todo = append(part, todo[0]), todo[1:]
			} else {
				partGone, gone = append(partGone, gone[0]), gone[1:]
			}
		}
		if len(part) == 0 && len(partGone) == 0 {
			return recs, false, nil
		}
		recs, err := ce.compute(ctx, c, rs, model, modelName, &kset, cats, m, hashes, part, recs[:0], sum)
		if err != nil {
			return nil, false, err
		}
		for i := range recs {
			st := recs[i].Verdict.Status
			sum.Counts[st]++
			if p, ok := was[recs[i].StarID]; !ok {
				sum.Transitions["(new) -> "+st]++
			} else if p != st {
				sum.Transitions[p+" -> "+st]++
			}
		}
		for _, id := range partGone {
			recs = append(recs, withdrawn(id))
			sum.Transitions[was[id]+" -> "+StatusWithdrawn]++
			sum.Counts[StatusWithdrawn]++
		}
		if len(partGone) > 0 {
			slices.SortFunc(recs, func(a, b db.StarRecord) int { return strings.Compare(a.StarID, b.StarID) })
		}
		computed += len(recs)
		return recs, true, nil
	})
	if err != nil {
		return nil, err
	}
	counts := make(map[string]int64, len(sum.Counts))
	for k, v := range sum.Counts {
		counts[k] = int64(v)
	}
	t = time.Now()
	if err := w.Finish(ctx, db.RunSummary{
		StarsTotal:      int64(computed + carried),
		StarsComputed:   int64(computed),
		StarsCarried:    int64(carried),
		RowsQuarantined: int64(sum.Quarantined),
		Counts:          counts,
	}); err != nil {
		return nil, err
	}
	sum.addStage("finish", t)
	sum.Computed = computed
	sum.Elapsed = time.Since(t0)
	return sum, nil
}

// idOrder returns the row numbers of ids in ascending id order.
func idOrder(ids []string) []int32 {
	order := make([]int32, len(ids))
	for i := range order {
		order[i] = int32(i)
	}
	slices.SortFunc(order, func(a, b int32) int { return strings.Compare(ids[a], ids[b]) })
	return order
}

// stageVetting names the progress stage that counts stars through quality,
// kinematics and the ledger.
const stageVetting = "quality, Monte Carlo, tracing, ledger"

// ledgerBatch is how many stars go into one ledger transaction.
const ledgerBatch = 20000

// computeAndWrite alternates between computing the next batch of records
// (next, on the caller's goroutine) and writing the previous one (on a
// writer goroutine, one transaction per batch), so that the ledger's
// single-threaded inserts overlap the Monte Carlo. next returns false when
// there is nothing left; it receives a spent batch's slice to reuse, and
// the engine to compute with: while the writer is the bottleneck (the last
// batch had to wait for it) that engine has one worker fewer, which leaves
// the writer a core of its own instead of a share of one; otherwise all
// workers. The first error of either side stops both.
func (e *Engine) computeAndWrite(ctx context.Context, w *db.RunWriter, total int, sum *Summary,
	next func(ctx context.Context, ce *Engine, reuse []db.StarRecord) ([]db.StarRecord, bool, error)) error {
	workers := e.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	full, spare := *e, *e
	full.Workers, spare.Workers = workers, max(1, workers-1)
	ce := &full
	ctx, cancel := context.WithCancelCause(ctx)
	defer cancel(nil)
	st := begin(e.Progress, stageVetting, total)
	defer st.End()
	todo := make(chan []db.StarRecord) // unbuffered: at most one batch computed ahead
	spent := make(chan []db.StarRecord, 2)
	werr := make(chan error, 1)
	var writeTime time.Duration
	go func() {
		done := 0
		var err error
		for recs := range todo {
			if err == nil {
				t := time.Now()
				if err = w.AddStars(ctx, recs); err != nil {
					cancel(err)
				}
				writeTime += time.Since(t)
				done += len(recs)
				st.Set(done)
			}
			select {
			case spent <- recs:
			default:
			}
		}
		werr <- err
	}()
	var err error
	for {
		var reuse []db.StarRecord
		select {
		case reuse = <-spent:
		default:
		}
		recs, more, nerr := next(ctx, ce, reuse)
		if nerr != nil {
			err = nerr
			break
		}
		if !more {
			break
		}
		select {
		case todo <- recs: // the writer was waiting
			ce = &full
			continue
		default:
		}
		ce = &spare
		select {
		case todo <- recs:
			continue
		case <-ctx.Done():
		}
		break
	}
	close(todo)
	if wErr := <-werr; wErr != nil {
		err = wErr // the cause of a cancellation seen by next
	}
	sum.addDuration("ledger", writeTime)
	if err == nil {
		err = ctx.Err()
	}
	return err
}

// compute runs quality, kinematics and tracing for the primary rows todo and
// returns their ledger records in row order.
func (e *Engine) compute(ctx context.Context, c *campaign.Campaign, rs *rules.RuleSet, model *potential.Model, modelName string,
	kset *kinematics.Settings, cats *Catalogs, m *Matched, hashes []string, todo []int,
	recs []db.StarRecord, sum *Summary) ([]db.StarRecord, error) {
	t := time.Now()
	sub := make([]quality.Star, len(todo))
	mergeRows(cats, m, todo, sub)
	sum.addStage("merge computed", t)
	t = time.Now()
	as, err := e.Assess(ctx, c, rs, sub)
	sum.addStage("quality", t)
	if err != nil {
		return nil, err
	}
	recs = slices.Grow(recs[:0], len(todo))[:len(todo)]
	var kin []int // indexes into todo of stars that passed the cuts
	for k, i := range todo {
		recs[k] = e.baseRecord(cats, m, &sub[k], hashes[i], i, &as[k])
		if as[k].Quality != "reject" {
			kin = append(kin, k)
			voidFields(rs, &as[k], &sub[k], &recs[k])
		}
	}
	if err := e.kinematics(ctx, c, model, modelName, kset, sub, kin, recs, sum); err != nil {
		return nil, err
	}
	return recs, nil
}

// baseRecord holds a computed star's inputs, matches and rule outcomes, with
// status rejected when a reject rule failed.
func (e *Engine) baseRecord(cats *Catalogs, m *Matched, s *quality.Star, hash string, row int, a *quality.Assessment) db.StarRecord {
	r := db.StarRecord{StarID: s.ID}
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
	kset *kinematics.Settings, sub []quality.Star, kin []int, recs []db.StarRecord, sum *Summary) error {
	k := c.Kinematics
	tset := orbit.TraceSettings{TraceMyr: k.TraceMyr, GCRadiusKpc: k.GCRadiusKpc, DiskRadiusKpc: k.DiskRadiusKpc}
	t0 := time.Now()
	defer sum.addStage("monte carlo", t0)
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
			t := time.Now()
			tr = orbit.TraceAll(ctx, model, traces, tset, e.Workers)
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
	prior := ""
	if !math.IsNaN(r.PUnboundFlat) {
		prior = fmt.Sprintf(", velocity prior %g km/s (flat prior: p_unbound %.3f)", k.VelocityPriorKms, r.PUnboundFlat)
	}
	switch {
	case r.PUnbound >= k.UnboundP:
		v.Status = StatusUnbound
		reason("kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf(">= %g", k.UnboundP),
			"p_unbound %.3f >= %g under model %s%s: speed %.0f (+%.0f/-%.0f) km/s against escape speed %.0f km/s; a candidate for follow-up, not a discovery",
			r.PUnbound, k.UnboundP, modelName, prior, r.SpeedKms[1], r.SpeedKms[2]-r.SpeedKms[1], r.SpeedKms[1]-r.SpeedKms[0], r.VEscKms[1])
	case r.PUnbound >= k.MarginalP:
		v.Status = StatusMarginal
		reason("kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf(">= %g and < %g", k.MarginalP, k.UnboundP),
			"p_unbound %.3f between %g and %g under model %s%s: speed %.0f km/s against escape speed %.0f km/s",
			r.PUnbound, k.MarginalP, k.UnboundP, modelName, prior, r.SpeedKms[1], r.VEscKms[1])
	default:
		v.Status = StatusBound
		reason("kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf("< %g", k.MarginalP),
			"p_unbound %.3f < %g under model %s%s: speed %.0f km/s against escape speed %.0f km/s",
			r.PUnbound, k.MarginalP, modelName, prior, r.SpeedKms[1], r.VEscKms[1])
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
