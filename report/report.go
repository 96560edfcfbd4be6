package report

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"starvet/galaxy/orbit"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/frames"
	"starvet/verdict"
)

// DefaultGCRadiusKpc is the centre radius drawn on the crossing plot when
// Options gives none (the campaign default, kinematics.gc_radius_kpc).
const DefaultGCRadiusKpc = orbit.DefaultGCRadiusKpc

// DefaultTopReasons is how many rejection reasons the page lists.
const DefaultTopReasons = 10

// ErrNoRun is returned (wrapped) when the source has no complete run.
var ErrNoRun = errors.New("no complete run to report on")

// Options are the settings of a report. A run that recorded its settings
// in the ledger is drawn with those, and the fields that shape the plots
// are ignored; for an older run, which recorded none, they are given here,
// zero values mean the stated defaults, and the page says which were used.
type Options struct {
	// EscapeRadiusKpc is the radius the escape-speed curve escapes to;
	// 0 = infinity (the campaign default).
	EscapeRadiusKpc float64
	// GCRadiusKpc is the centre radius on the crossing plot; 0 =
	// DefaultGCRadiusKpc.
	GCRadiusKpc float64
	// SunDistanceKpc places the Sun on the crossing plot at x = -R0; 0 =
	// frames.DefaultSun().DistanceKpc.
	SunDistanceKpc float64
	// TopReasons is how many rejection reasons to list; 0 = DefaultTopReasons.
	TopReasons int
	// SettingsSource says where the non-zero settings above come from
	// (e.g. a campaign file and whether it is the run's); shown on the
	// page. "" = "given in the options".
	SettingsSource string
	// Truth, when set, marks the true values of an invented scenario on
	// the weighing plots.
	Truth *HaloTruth
}

// HaloTruth is what a simulated Galaxy's weighing should find: the escape
// speed at the Sun (to infinity), the M200 the velocity tail estimates (on
// the concentration-mass relation) and the M200 of the simulated halo
// (what the orbit method estimates). Zero values are not marked.
type HaloTruth struct {
	VEscKms, M200TailMsun, M200Msun float64
}

// PlotSummary describes one written plot.
type PlotSummary struct {
	File     string         // file name inside the report directory
	Title    string         // caption title
	Points   map[string]int // status -> markers drawn (legend markers excluded)
	Omitted  int            // stars of the plot's population without the values to draw
	Extra    int            // other markers (per-star escape speeds on plot 1)
	Note     string         // what was drawn instead, or why nothing was
	HasCurve bool           // plot 1: the model's escape-speed curves are drawn
}

// Summary is what Write produced.
type Summary struct {
	RunID      int64
	Index      string // path of index.html
	Files      []string
	Counts     map[string]int64
	Candidates int // rows of the candidate table
	Plots      []PlotSummary
}

// star is what the report keeps of a verdict.
type star struct {
	db.VerdictRow
	hasPos        bool
	raDeg, decDeg float64
}

type reasonCount struct {
	RuleID  string
	Stars   int
	Example string
	StarID  string // star of the example message
}

// data is everything the page is made from.
type data struct {
	run               *db.Run
	catalogs          []db.CatalogRow
	stars             []star // by star id
	counts            map[string]int64
	reasons           []reasonCount
	rejectedNoReasons int // rejected stars with no stored reasons
	models            []string
	crossings         []db.CrossingRow
	crossStat         []string // status of each crossing's star
	opt               Options
	gcDefault         bool
	sunDefault        bool
	settings          *db.RunSettings // what the run recorded; none for an older run
	inference         *db.Inference   // the latest weighing of the run; nil for none
}

// Write reads run runID (0 = latest complete run) from src and writes
// dir/index.html and its SVG plots. The same ledger gives the same files.
func Write(ctx context.Context, src Source, runID int64, dir string, opt Options) (*Summary, error) {
	d, err := gather(ctx, src, runID, opt)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	sum := &Summary{RunID: d.run.ID, Counts: d.counts}
	plots := []func(*data) (*PlotSummary, []byte, error){speedPlot, skyPlot, pUnboundPlot, crossingPlot}
	if d.inference != nil && d.inference.Curves != nil {
		plots = append(plots, tailPlot, escapePosteriorPlot, massPosteriorPlot, orbitPlot)
	}
	for _, mk := range plots {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		ps, svg, err := mk(d)
		if err != nil {
			return nil, fmt.Errorf("report %s: %w", ps.File, err)
		}
		path := filepath.Join(dir, ps.File)
		if err := os.WriteFile(path, svg, 0o644); err != nil {
			return nil, fmt.Errorf("report: %w", err)
		}
		sum.Files = append(sum.Files, path)
		sum.Plots = append(sum.Plots, *ps)
	}
	page, ncand, err := renderHTML(d, sum.Plots)
	if err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	sum.Index = filepath.Join(dir, "index.html")
	if err := os.WriteFile(sum.Index, page, 0o644); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	sum.Files = append(sum.Files, sum.Index)
	sum.Candidates = ncand
	return sum, nil
}

func gather(ctx context.Context, src Source, runID int64, opt Options) (*data, error) {
	d := &data{opt: opt, counts: map[string]int64{}}
	if d.opt.TopReasons <= 0 {
		d.opt.TopReasons = DefaultTopReasons
	}
	var err error
	if d.run, err = findRun(ctx, src, runID); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	if d.settings, err = src.RunSettings(ctx, d.run.ID); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	d.useSettings()
	if d.catalogs, err = src.RunCatalogs(ctx, d.run.ID); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	if err := d.gatherStars(ctx, src); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	index := make(map[string]int, len(d.stars))
	for i := range d.stars {
		index[d.stars[i].StarID] = i
	}
	if err := d.gatherReasons(ctx, src); err != nil {
		return nil, err
	}
	if err := d.gatherPositions(ctx, src, index); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	if err := d.gatherCrossings(ctx, src, index); err != nil {
		return nil, err
	}
	if d.inference, err = src.LastInference(ctx, d.run.ID); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	return d, nil
}

// findRun returns run runID, or the latest complete run for 0.
func findRun(ctx context.Context, src Source, runID int64) (*db.Run, error) {
	if runID != 0 {
		return src.Run(ctx, runID)
	}
	r, err := src.LastCompleteRun(ctx)
	if err == nil && r == nil {
		err = ErrNoRun
	}
	return r, err
}

// gatherStars reads the run's verdicts in star id order, counting them
// by status and collecting the model names.
func (d *data) gatherStars(ctx context.Context, src Source) error {
	models := map[string]bool{}
	n := 0
	_, err := src.ListRun(ctx, db.ListFilter{Run: d.run.ID}, func(v db.VerdictRow) error {
		if n++; n%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		d.stars = append(d.stars, star{VerdictRow: v})
		d.counts[v.Status]++
		if v.ModelName != "" {
			models[v.ModelName] = true
		}
		return nil
	})
	if err != nil {
		return err
	}
	// ListRun orders by star id already; sorting again makes the order ours.
	sort.SliceStable(d.stars, func(i, j int) bool { return d.stars[i].StarID < d.stars[j].StarID })
	for m := range models {
		d.models = append(d.models, m)
	}
	sort.Strings(d.models)
	return nil
}

// gatherPositions attaches the stored positions to the run's stars.
func (d *data) gatherPositions(ctx context.Context, src Source, index map[string]int) error {
	return src.Positions(ctx, d.run.ID, func(id string, ra, dec float64) error {
		i, ok := index[id]
		if !ok || math.IsNaN(ra) || math.IsNaN(dec) {
			return nil
		}
		d.stars[i].hasPos, d.stars[i].raDeg, d.stars[i].decDeg = true, ra, dec
		return nil
	})
}

// useSettings draws the plots with the settings the run recorded; for a
// run that recorded none it keeps the options, else the defaults.
func (d *data) useSettings() {
	if d.settings.Recorded() {
		d.opt.SettingsSource = fmt.Sprintf("recorded in the ledger for run %d", d.run.ID)
		d.opt.EscapeRadiusKpc, d.opt.GCRadiusKpc, d.opt.SunDistanceKpc = 0, 0, 0
		if x, ok := d.settings.Float(campaign.SettingEscapeRadiusKpc); ok {
			d.opt.EscapeRadiusKpc = x
		}
		if x, ok := d.settings.Float(campaign.SettingGCRadiusKpc); ok {
			d.opt.GCRadiusKpc = x
		}
		if x, ok := d.settings.Float(campaign.SettingSunDistanceKpc); ok {
			d.opt.SunDistanceKpc = x
		}
	}
	if d.opt.GCRadiusKpc <= 0 {
		d.opt.GCRadiusKpc, d.gcDefault = DefaultGCRadiusKpc, true
	}
	if d.opt.SunDistanceKpc <= 0 {
		d.opt.SunDistanceKpc, d.sunDefault = frames.DefaultSun().DistanceKpc, true
	}
}

// gatherReasons counts, over the rejected stars, the stars each rule
// failed, keeping the message of the first such star (by id) as example.
// Reasons live at the verdict's computing run.
func (d *data) gatherReasons(ctx context.Context, src Source) error {
	byRule := map[string]*reasonCount{}
	for i := range d.stars {
		s := &d.stars[i]
		if s.Status != string(verdict.Rejected) {
			continue
		}
		if i%1024 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		rs, err := src.Reasons(ctx, s.ComputedInRun, s.StarID)
		if err != nil {
			return fmt.Errorf("report: %w", err)
		}
		if len(rs) == 0 {
			d.rejectedNoReasons++
		}
		seen := map[string]bool{}
		for _, r := range rs {
			if r.Outcome != "fail" || seen[r.RuleID] {
				continue
			}
			seen[r.RuleID] = true
			rc := byRule[r.RuleID]
			if rc == nil {
				rc = &reasonCount{RuleID: r.RuleID, Example: r.Message, StarID: s.StarID}
				byRule[r.RuleID] = rc
			}
			rc.Stars++
		}
	}
	for _, rc := range byRule {
		d.reasons = append(d.reasons, *rc)
	}
	sort.Slice(d.reasons, func(i, j int) bool {
		a, b := d.reasons[i], d.reasons[j]
		if a.Stars != b.Stars {
			return a.Stars > b.Stars
		}
		return a.RuleID < b.RuleID
	})
	return nil
}

// gatherCrossings keeps the crossings of the run's stars, ordered by star
// and then as the source gave them.
func (d *data) gatherCrossings(ctx context.Context, src Source, index map[string]int) error {
	err := src.Crossings(ctx, d.run.ID, func(c db.CrossingRow) error {
		if _, ok := index[c.StarID]; ok {
			d.crossings = append(d.crossings, c)
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	sort.SliceStable(d.crossings, func(i, j int) bool { return d.crossings[i].StarID < d.crossings[j].StarID })
	for _, c := range d.crossings {
		d.crossStat = append(d.crossStat, d.stars[index[c.StarID]].Status)
	}
	return nil
}
