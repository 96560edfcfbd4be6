package report

import (
	"context"

	"starvet/db"
)

// Source is what the report reads from a ledger. *db.Ledger implements it.
type Source interface {
	Run(ctx context.Context, id int64) (*db.Run, error)
	LastCompleteRun(ctx context.Context) (*db.Run, error)
	RunCatalogs(ctx context.Context, runID int64) ([]db.CatalogRow, error)
	ListRun(ctx context.Context, f db.ListFilter, fn func(db.VerdictRow) error) (int64, error)
	Reasons(ctx context.Context, runID int64, starID string) ([]db.ReasonRow, error)
	// Crossings gives the back-traced plane crossings of every star with a
	// verdict in runID, as stored by the run that computed the verdict.
	Crossings(ctx context.Context, runID int64, fn func(db.CrossingRow) error) error
	// Positions gives the ICRS position (deg) of every star with a verdict
	// in runID, from the inputs of the run that computed it; NaN if missing.
	Positions(ctx context.Context, runID int64, fn func(starID string, raDeg, decDeg float64) error) error
	// RunSettings gives the settings runID recorded (none for a run
	// written before the ledger recorded them).
	RunSettings(ctx context.Context, runID int64) (*db.RunSettings, error)
	// LastInference gives the latest weighing of runID's stars (starvet
	// weigh), or nil.
	LastInference(ctx context.Context, runID int64) (*db.Inference, error)
}

var _ Source = (*db.Ledger)(nil)
