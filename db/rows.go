package db

import (
	"database/sql"
	"fmt"
	"math"
	"slices"
	"time"

	"starvet/catalog"
)

// NumInputs is the number of canonical numeric fields stored per star:
// catalog.RA .. catalog.DistModErr.
const NumInputs = int(catalog.NumFields) - 1

// InputName returns the column name of Values[i] (the canonical field name).
func InputName(i int) string { return catalog.Fields[catalog.Field(i+1)].Name }

// InputUnit returns the canonical unit of Values[i].
func InputUnit(i int) string { return catalog.Fields[catalog.Field(i+1)].Unit }

// RunInfo identifies what a run was made from; it is written at BeginRun.
// The run's config_hash is Settings.ConfigHash().
type RunInfo struct {
	ToolVersion  string
	CampaignHash string
	RulesetHash  string
	MatchHash    string
	ModelHash    string
	Seed         int64
	Full         bool // the run recomputed every star (--full)
	Note         string
	Settings     RunSettings // required: BeginRun refuses a run without settings
}

// RunSummary closes a run. Zero fields are filled from the ledger itself;
// non-zero fields are checked against it and a disagreement is ErrSummary.
type RunSummary struct {
	StarsTotal      int64
	StarsComputed   int64
	StarsCarried    int64
	RowsQuarantined int64
	Counts          map[string]int64 // status -> stars
	Note            string           // appended to the run's note
}

// Run is one row of the runs table.
type Run struct {
	ID              int64
	StartedAt       time.Time
	FinishedAt      time.Time // zero while running
	State           string    // running, complete or failed
	Interrupted     bool      // state running in the file, but no writer holds the lock: shown as failed
	ToolVersion     string
	CampaignHash    string
	RulesetHash     string
	ConfigHash      string
	MatchHash       string
	ModelHash       string
	Seed            int64
	Full            bool
	StarsTotal      int64
	StarsComputed   int64
	StarsCarried    int64
	RowsQuarantined int64
	Counts          map[string]int64
	Note            string
}

// StateText is the state for display: "failed (interrupted)" for a run
// whose writer died and that no writable open has repaired yet.
func (r *Run) StateText() string {
	if r.Interrupted {
		return "failed (interrupted)"
	}
	return r.State
}

// WorkText says what a complete run did with its stars, from its stored
// counts and full flag; "" for a run that did not complete.
func (r *Run) WorkText() string {
	switch {
	case r.State != "complete":
		return ""
	case r.Full:
		return "full (--full): every star computed"
	case r.StarsCarried == 0:
		return "every star computed"
	}
	return fmt.Sprintf("incremental: %d computed, %d carried", r.StarsComputed, r.StarsCarried)
}

// CatalogRow describes one input catalog of a run.
type CatalogRow struct {
	Name            string
	Release         string
	File            string
	FileSHA256      string
	RowsRead        int64
	RowsKept        int64
	RowsQuarantined int64
	Epoch           float64 // Julian year; NaN if unknown
	Role            string
}

// QuarantineRow is one rejected input row. Line and Column are 1-based;
// Column 0 means the whole line.
type QuarantineRow struct {
	Catalog    string
	Line       int // 1-based line of a text file; 0 for a binary table
	Row        int // 1-based row of a binary table; 0 for a text file
	Column     int
	ColumnName string
	Value      string
	Reason     string
}

// InputRow is the merged input of a computed star, canonical units
// (catalog.Fields), NaN for missing.
type InputRow struct {
	InputHash string
	Values    [NumInputs]float64 // index i is catalog.Field(i+1)
	DupCount  int
}

// MatchRow is the best counterpart of a star in one secondary catalog.
type MatchRow struct {
	Catalog       string
	CounterpartID string
	SepArcsec     float64
	MatchProb     float64
	Candidates    int
	Ambiguous     bool
}

// ReasonRow is one rule or kinematic outcome behind a verdict.
type ReasonRow struct {
	RuleID    string
	Outcome   string // fail, skipped, pass or info
	Severity  string
	Value     float64 // NaN when the rule has no single value
	Threshold string
	Message   string
}

// VerdictRow is one star's status in one run. RunID and StarID are filled
// by readers; writers take them from the RunWriter and the StarRecord.
type VerdictRow struct {
	RunID            int64
	StarID           string
	Status           string
	Quality          string // pass, flag or reject; "" for none
	ComputedInRun    int64  // 0 on write means "this run"
	InputHash        string
	DistanceMethod   string
	HasRV            bool
	SpeedP16Kms      float64
	SpeedP50Kms      float64
	SpeedP84Kms      float64
	SpeedLowerP50Kms float64
	RGCKpc           float64
	VEscKms          float64
	PUnbound         float64
	PUnboundLower    float64
	Origin           string
	PGCOrigin        float64
	GCConsistency    float64
	FlightTimeMyr    float64
	ModelName        string
	// Since schema 10, the numbers a star's kinematic reasons are written
	// from (KinematicNumbers): the Monte Carlo draws used (0 = none, NULL),
	// the distance percentiles in kpc, the flat-prior p_unbound, and for a
	// traced star the samples traced and how many crossed the plane
	// (TraceSamples 0 = not traced).
	SamplesUsed                        int
	DistP16Kpc, DistP50Kpc, DistP84Kpc float64
	PUnboundFlat                       float64
	TraceSamples, TraceCrossed         int
}

// NewVerdictRow returns a verdict with the given status and every numeric
// column missing (NaN, stored as NULL). A zero-valued VerdictRow{} would
// store 0 km/s speeds and probabilities instead.
func NewVerdictRow(status string) VerdictRow {
	nan := math.NaN()
	return VerdictRow{Status: status, SpeedP16Kms: nan, SpeedP50Kms: nan, SpeedP84Kms: nan, SpeedLowerP50Kms: nan,
		RGCKpc: nan, VEscKms: nan, PUnbound: nan, PUnboundLower: nan, PGCOrigin: nan, GCConsistency: nan, FlightTimeMyr: nan,
		DistP16Kpc: nan, DistP50Kpc: nan, DistP84Kpc: nan, PUnboundFlat: nan}
}

// Carried reports whether the verdict was carried forward from an earlier
// run rather than computed in its own.
func (v *VerdictRow) Carried() bool { return v.ComputedInRun != v.RunID }

// StarRecord is everything a run writes for one star it computed: the
// verdict, and for a star in the primary catalog its Inputs, Matches and
// Reasons (a withdrawn star has a verdict and a reason only). A star
// carried forward unchanged is not written at all.
type StarRecord struct {
	StarID  string
	Inputs  *InputRow
	Matches []MatchRow
	Verdict VerdictRow
	Reasons []ReasonRow
	// Crossings are back-traced crossings of the Galactic plane (computed
	// stars only; StarID is taken from the record).
	Crossings []CrossingRow
}

// CrossingRow is one back-traced crossing of the Galactic plane z = 0:
// Galactocentric x, y in kpc and the time before now in Myr.
type CrossingRow struct {
	StarID     string // filled by readers
	XKpc, YKpc float64
	TMyr       float64
}

// PrevSet is a run's set of verdicts as an incremental run needs it, in
// ascending star id order (SQLite's BINARY collation, which is Go's string
// order): IDs[i] has Stars[i].
type PrevSet struct {
	IDs   []string
	Stars []PrevStar
}

// Len is the number of stars in the set.
func (p *PrevSet) Len() int { return len(p.IDs) }

// Find returns a star's entry, by binary search.
func (p *PrevSet) Find(id string) (PrevStar, bool) {
	i, ok := slices.BinarySearch(p.IDs, id)
	if !ok {
		return PrevStar{}, false
	}
	return p.Stars[i], true
}

// PrevStar is what an incremental run needs about a star's last verdict.
type PrevStar struct {
	Status        string
	InputHash     string
	ComputedInRun int64
}

// Parameter helpers: NaN and "" become NULL.

func nf(x float64) any {
	if math.IsNaN(x) {
		return nil
	}
	return x
}

func ns(s string) any {
	if s == "" {
		return nil
	}
	return s
}

func b2i(b bool) int64 {
	if b {
		return 1
	}
	return 0
}

// Scan helpers: NULL becomes NaN or "".

func fv(n sql.NullFloat64) float64 {
	if !n.Valid {
		return math.NaN()
	}
	return n.Float64
}

func sv(n sql.NullString) string { return n.String }
