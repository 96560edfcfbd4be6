package vetting

import (
	"context"
	"slices"
	"strings"
	"time"

	"starvet/campaign"
	"starvet/db"
	"starvet/verdict"
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
	Counts      map[verdict.Status]int
	Transitions map[string]int // "old -> new" for stars whose status changed; "(new) -> s" for new stars
	Catalogs    []db.CatalogRow
	Quarantined int
	// Warnings are the catalogs' own warnings (catalog.Report.Warnings),
	// e.g. a query result cut short by the service.
	Warnings []string
	Computed int
	Carried  int
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

// carry counts the stars the plan carries forward.
func (s *Summary) carry(p *plan) {
	for st, n := range p.carried {
		s.Counts[st] += n
	}
	s.Carried = p.nCarried
}

// Run is the main job: ingest, match, quality, kinematics, verdicts and the
// ledger. Stars whose inputs, rule set and model settings are unchanged since
// the last complete run are carried forward.
func (e *Engine) Run(ctx context.Context, c *campaign.Campaign, opt RunOptions) (sum *Summary, err error) {
	t0 := time.Now()
	s, err := newRunSettings(c, opt)
	if err != nil {
		return nil, err
	}
	l, err := db.Open(ctx, s.ledgerPath, db.Options{LockWait: opt.LockWait})
	if err != nil {
		return nil, err
	}
	defer l.Close()
	w, err := l.BeginRun(ctx, runInfo(e.ToolVersion, s))
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			// The run is marked failed; the next open would do it anyway.
			_ = w.Fail(context.WithoutCancel(ctx), err)
		}
	}()
	sum = &Summary{RunID: w.ID(), LedgerPath: s.ledgerPath, ModelName: s.modelName,
		Counts: map[verdict.Status]int{}, Transitions: map[string]int{}, Stages: map[string]time.Duration{}}

	prevRun, err := l.LastCompleteRun(ctx)
	if err != nil {
		return nil, err
	}
	if prevRun != nil {
		sum.PrevRunID = prevRun.ID
	}
	sum.RecomputeAll = recomputeAllReason(prevRun, opt.Full, s.rules.Fingerprint, s.modelHash)
	prev := readPrevious(ctx, l, prevRun)
	defer prev.close()

	in, order, err := e.readInput(ctx, s, sum)
	if err != nil {
		return nil, err
	}
	prevSet, err := prev.wait(sum)
	if err != nil {
		return nil, err
	}
	if err := recordCatalogs(ctx, w, in.cats, sum); err != nil {
		return nil, err
	}
	p := makePlan(prevSet, in.cats.Primary.IDs, keepOwned(<-order, in.matched.Owned), in.hashes, sum.RecomputeAll != "")
	sum.carry(&p)
	computed, err := e.writeVerdicts(ctx, w, s, in, &p, sum)
	if err != nil {
		return nil, err
	}
	if err := finish(ctx, w, computed, p.nCarried, sum); err != nil {
		return nil, err
	}
	sum.Computed = computed
	sum.Elapsed = time.Since(t0)
	return sum, nil
}

// readInput ingests and matches the catalogs and hashes every primary row.
// order delivers the primary rows in star id order, sorted while the
// catalogs are matched.
func (e *Engine) readInput(ctx context.Context, s *runSettings, sum *Summary) (in *runInput, order <-chan []int32, err error) {
	cats, err := e.Ingest(ctx, s.campaign, s.opt.Strict, s.rejectDir)
	if err != nil {
		return nil, nil, err
	}
	orderDone := make(chan []int32, 1)
	go func() { orderDone <- idOrder(cats.Primary.IDs) }()
	m, err := e.Match(ctx, s.campaign, cats)
	if err != nil {
		return nil, nil, err
	}
	t := time.Now()
	hashes, err := hashAll(ctx, cats, m, e.Workers)
	if err != nil {
		return nil, nil, err
	}
	sum.addStage("merge", t)
	return &runInput{cats: cats, matched: m, hashes: hashes}, orderDone, nil
}

// previous reads the last complete run's state on its own goroutine: it
// needs only the ledger, so it overlaps ingest and match.
type previous struct {
	done   chan previousState
	cancel context.CancelFunc
	waited bool
}

type previousState struct {
	set *db.PrevSet
	err error
	d   time.Duration
}

// readPrevious starts reading the state of run (nil: none, an empty set).
func readPrevious(ctx context.Context, l *db.Ledger, run *db.Run) *previous {
	p := &previous{done: make(chan previousState, 1), cancel: func() {}}
	if run == nil {
		p.done <- previousState{set: &db.PrevSet{}}
		return p
	}
	ctx, p.cancel = context.WithCancel(ctx)
	go func() {
		t := time.Now()
		set, err := l.PreviousState(ctx, run.ID)
		p.done <- previousState{set: set, err: err, d: time.Since(t)}
	}()
	return p
}

// wait returns the state, timing the wait and the read into sum.
func (p *previous) wait(sum *Summary) (*db.PrevSet, error) {
	t := time.Now()
	ps := <-p.done
	p.waited = true
	if ps.err != nil {
		return nil, ps.err
	}
	sum.addStage("previous-wait", t)
	sum.addDuration("previous-state", ps.d)
	return ps.set, nil
}

// close stops an unfinished read and waits for it, so that the reader ends
// before the ledger is closed.
func (p *previous) close() {
	p.cancel()
	if !p.waited {
		<-p.done
	}
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
