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
}

// CrossingSource is the optional part of a Source that gives back-traced
// plane crossings. Without it the crossing plot says the ledger has none.
type CrossingSource interface {
	Crossings(ctx context.Context, runID int64, fn func(CrossingRow) error) error
}

// PositionSource is the optional part of a Source that gives each star's
// ICRS position (deg) for the sky map.
type PositionSource interface {
	Positions(ctx context.Context, runID int64, fn func(starID string, raDeg, decDeg float64) error) error
}

// CrossingRow is one back-traced crossing of the Galactic plane z = 0:
// Galactocentric x, y in kpc and the time before now in Myr.
//
// SHIM: mirrors the announced db.CrossingRow; becomes an alias of it once
// db has the type.
type CrossingRow struct {
	StarID     string
	XKpc, YKpc float64
	TMyr       float64
}
