package report

import (
	"context"
	"fmt"
	"math"
	"time"

	"starvet/db"
)

// fakeSource is a ledger of known content.
type fakeSource struct {
	runs      []db.Run
	catalogs  map[int64][]db.CatalogRow
	verdicts  map[int64][]db.VerdictRow  // by run, in star id order
	reasons   map[string][]db.ReasonRow  // key "run/star"
	positions map[string][2]float64      // star -> ra, dec (deg)
	crossings map[int64][]db.CrossingRow // by computing run
	settings  map[int64]*db.RunSettings  // by run; none for a run not listed
	failOn    string                     // method name that returns errBoom
	inference *db.Inference              // the latest weighing of every run; nil for none
}

func (f *fakeSource) RunSettings(ctx context.Context, runID int64) (*db.RunSettings, error) {
	if s := f.settings[runID]; s != nil {
		return s, nil
	}
	return &db.RunSettings{}, nil
}

var errBoom = fmt.Errorf("fake source failure")

func (f *fakeSource) LastInference(ctx context.Context, runID int64) (*db.Inference, error) {
	return f.inference, nil
}

func (f *fakeSource) Run(ctx context.Context, id int64) (*db.Run, error) {
	if f.failOn == "Run" {
		return nil, errBoom
	}
	for i := range f.runs {
		if f.runs[i].ID == id {
			r := f.runs[i]
			return &r, nil
		}
	}
	return nil, fmt.Errorf("fake ledger has no run %d: %w", id, db.ErrNoRun)
}

func (f *fakeSource) LastCompleteRun(ctx context.Context) (*db.Run, error) {
	for i := len(f.runs) - 1; i >= 0; i-- {
		if f.runs[i].State == "complete" {
			r := f.runs[i]
			return &r, nil
		}
	}
	return nil, nil
}

func (f *fakeSource) RunCatalogs(ctx context.Context, runID int64) ([]db.CatalogRow, error) {
	return f.catalogs[runID], nil
}

func (f *fakeSource) ListRun(ctx context.Context, lf db.ListFilter, fn func(db.VerdictRow) error) (int64, error) {
	for _, v := range f.verdicts[lf.Run] {
		if lf.Status != "" && v.Status != lf.Status {
			continue
		}
		if err := fn(v); err != nil {
			return lf.Run, err
		}
	}
	return lf.Run, nil
}

func (f *fakeSource) Reasons(ctx context.Context, runID int64, starID string) ([]db.ReasonRow, error) {
	if f.failOn == "Reasons" {
		return nil, fmt.Errorf("star %q: %w", starID, errBoom)
	}
	return f.reasons[fmt.Sprintf("%d/%s", runID, starID)], nil
}

func (f *fakeSource) Positions(ctx context.Context, runID int64, fn func(string, float64, float64) error) error {
	for _, v := range f.verdicts[runID] {
		if p, ok := f.positions[v.StarID]; ok {
			if err := fn(v.StarID, p[0], p[1]); err != nil {
				return err
			}
		}
	}
	return nil
}

// Crossings follows db.Ledger: the crossings of each star of runID as
// stored by the run that computed its verdict, by star.
func (f *fakeSource) Crossings(ctx context.Context, runID int64, fn func(db.CrossingRow) error) error {
	if f.failOn == "Crossings" {
		return errBoom
	}
	byStar := map[int64]map[string][]db.CrossingRow{}
	for run, cs := range f.crossings {
		byStar[run] = map[string][]db.CrossingRow{}
		for _, c := range cs {
			byStar[run][c.StarID] = append(byStar[run][c.StarID], c)
		}
	}
	for _, v := range f.verdicts[runID] {
		for _, c := range byStar[v.ComputedInRun][v.StarID] {
			if err := fn(c); err != nil {
				return err
			}
		}
	}
	return nil
}

// nan is a missing value.
var nan = math.NaN()

func verdictRow(run int64, id, status string) db.VerdictRow {
	v := db.VerdictRow{RunID: run, StarID: id, Status: status, ComputedInRun: run,
		SpeedP16Kms: nan, SpeedP50Kms: nan, SpeedP84Kms: nan, SpeedLowerP50Kms: nan, RGCKpc: nan, VEscKms: nan,
		PUnbound: nan, PUnboundLower: nan, PGCOrigin: nan, GCConsistency: nan, FlightTimeMyr: nan}
	return v
}

func moving(v db.VerdictRow, p16, p50, p84, rKpc, vEsc, pUnb float64, model string) db.VerdictRow {
	v.HasRV = true
	v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms = p16, p50, p84
	v.RGCKpc, v.VEscKms, v.PUnbound, v.ModelName = rKpc, vEsc, pUnb, model
	v.DistanceMethod = "inverse"
	return v
}

// fixture is the fake ledger of the tests. Run 2 is the latest complete
// one; run 3 failed. Run 2 holds:
//
//	unbound  3 (U1 p=0.99, U2 p=0.97, U3 p=0.97 slower; U3 carried from run 1)
//	marginal 2 (M1 p=0.6, M2 p=0.56)
//	bound    4 (p_unbound 0, 0.02, 0.1, NaN: B4 has an rv but no p_unbound)
//	needs-rv 2 (no speed)
//	rejected 5 (R1..R5; reasons below)
//	withdrawn 1 (W1)
//
// Positions are known for every star but N2 and W1. Crossings: U1 3, U2 2
// (one non-finite), U3 2 (stored at run 1), M1 1; plus one crossing of a
// star of another run that must be ignored.
func fixture(model string) *fakeSource {
	t0 := time.Date(2026, 11, 30, 10, 0, 0, 0, time.UTC)
	f := &fakeSource{
		runs: []db.Run{
			{ID: 1, State: "complete", StartedAt: t0, FinishedAt: t0.Add(time.Minute), ToolVersion: "test"},
			{ID: 2, State: "complete", StartedAt: t0.Add(time.Hour), FinishedAt: t0.Add(61 * time.Minute), ToolVersion: "test",
				StarsTotal: 17, StarsComputed: 16, StarsCarried: 1},
			{ID: 3, State: "failed", StartedAt: t0.Add(2 * time.Hour), ToolVersion: "test"},
		},
		catalogs: map[int64][]db.CatalogRow{2: {
			{Name: "qelvar", Release: "Q3", File: "/data/qelvar_q3.csv", RowsRead: 20, RowsKept: 18, RowsQuarantined: 2, Epoch: 2019.5, Role: "astrometry"},
			{Name: "ostrun", Release: "O1", File: "/data/ostrun.csv", RowsRead: 9, RowsKept: 9, Epoch: 2011.5, Role: "spectroscopy"},
		}},
		reasons:   map[string][]db.ReasonRow{},
		positions: map[string][2]float64{},
		crossings: map[int64][]db.CrossingRow{},
	}
	var vs []db.VerdictRow
	add := func(v db.VerdictRow) { vs = append(vs, v) }
	add(moving(verdictRow(2, "B1", "bound"), 200, 250, 300, 8.5, 550, 0, model))
	add(moving(verdictRow(2, "B2", "bound"), 300, 350, 400, 12, 520, 0.02, model))
	add(moving(verdictRow(2, "B3", "bound"), 380, 420, 470, 20, 480, 0.1, model))
	add(moving(verdictRow(2, "B4", "bound"), 150, 200, 260, 9, 545, nan, model))
	m1 := moving(verdictRow(2, "M1", "marginal"), 420, 500, 600, 15, 500, 0.6, model)
	m1.Origin, m1.GCConsistency, m1.FlightTimeMyr = "disk", 0.2, 40
	add(m1)
	add(moving(verdictRow(2, "M2", "marginal"), 400, 480, 560, 25, 460, 0.56, model))
	n1 := verdictRow(2, "N1", "needs-rv")
	n1.RGCKpc, n1.VEscKms, n1.ModelName = 10, 530, model
	add(n1)
	n2 := verdictRow(2, "N2", "needs-rv")
	n2.RGCKpc, n2.VEscKms, n2.ModelName = 30, 440, model
	add(n2)
	for i := 1; i <= 5; i++ {
		add(verdictRow(2, fmt.Sprintf("R%d", i), "rejected"))
	}
	u1 := moving(verdictRow(2, "U1", "unbound"), 900, 1000, 1100, 50, 380, 0.99, model)
	u1.Origin, u1.GCConsistency, u1.FlightTimeMyr = "galactic-centre", 0.8, 55
	add(u1)
	u2 := moving(verdictRow(2, "U2", "unbound"), 700, 750, 800, 30, 430, 0.97, model)
	u2.Origin, u2.GCConsistency, u2.FlightTimeMyr = "galactic-centre", 0.5, 42
	add(u2)
	u3 := moving(verdictRow(2, "U3", "unbound"), 650, 700, 760, 40, 400, 0.97, model)
	u3.ComputedInRun = 1
	add(u3)
	add(verdictRow(2, "W1", "withdrawn"))
	f.verdicts = map[int64][]db.VerdictRow{2: vs}

	// Reasons of the rejected stars (run 2 computed them), plus a carried
	// star's at run 1; info rows and repeated failures must not count twice.
	fail := func(rule, msg string) db.ReasonRow { return db.ReasonRow{RuleID: rule, Outcome: "fail", Message: msg} }
	f.reasons["2/R1"] = []db.ReasonRow{fail("plx-signif", "parallax_significance 2.1 < 5"), fail("noise", "excess 3 > 2")}
	f.reasons["2/R2"] = []db.ReasonRow{fail("plx-signif", "parallax_significance 1.0 < 5"), fail("plx-signif", "again")}
	f.reasons["2/R3"] = []db.ReasonRow{fail("plx-signif", "parallax_significance 3.3 < 5"), {RuleID: "snr", Outcome: "skipped"}}
	f.reasons["2/R4"] = []db.ReasonRow{fail("noise", "excess 4 > 2"), {RuleID: "kinematics.distance", Outcome: "info"}}
	// R5 has no stored reasons.
	f.reasons["2/U1"] = []db.ReasonRow{{RuleID: "kinematics.p-unbound", Outcome: "info"}}

	i := 0
	for _, v := range vs {
		if v.StarID == "N2" || v.StarID == "W1" {
			continue
		}
		f.positions[v.StarID] = [2]float64{float64(i) * 21.7, -60 + float64(i)*7.3}
		i++
	}
	f.crossings[2] = []db.CrossingRow{
		{StarID: "U1", XKpc: 0.1, YKpc: -0.2, TMyr: 50}, {StarID: "U1", XKpc: 0.3, YKpc: 0.1, TMyr: 52}, {StarID: "U1", XKpc: -0.5, YKpc: 0.4, TMyr: 56},
		{StarID: "U2", XKpc: 2, YKpc: 1, TMyr: 40}, {StarID: "U2", XKpc: nan, YKpc: 1, TMyr: 41},
		{StarID: "M1", XKpc: -11, YKpc: 4, TMyr: 38},
		{StarID: "U3", XKpc: 9, YKpc: 9, TMyr: 1}, // U3 was computed in run 1: ignored here
	}
	f.crossings[1] = []db.CrossingRow{
		{StarID: "U3", XKpc: 0.2, YKpc: 0.2, TMyr: 60}, {StarID: "U3", XKpc: -0.1, YKpc: 0.3, TMyr: 61},
		{StarID: "B1", XKpc: 5, YKpc: 5, TMyr: 10}, // B1's verdict in run 2 was computed in run 2: ignored
		{StarID: "ZZ", XKpc: 1, YKpc: 1, TMyr: 10}, // not in run 2
	}
	return f
}
