package tiling

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"

	"starvet/db"
)

// TileState is what a tile's ledger says about the tile.
type TileState struct {
	Tile *Tile
	// Run is the tile ledger's last complete run (nil: none, or no ledger).
	Run *db.Run
	// Problem says why the tile is not ready to gather ("" when it is):
	// never run, or last run on other shards or another campaign.
	Problem string
}

// States reads every tile's ledger of plan p in dir.
func States(ctx context.Context, dir string, p *Plan) ([]TileState, error) {
	out := make([]TileState, len(p.Tiles))
	for k := range p.Tiles {
		st, err := tileState(ctx, dir, &p.Tiles[k])
		if err != nil {
			return nil, err
		}
		out[k] = st
	}
	return out, nil
}

func tileState(ctx context.Context, dir string, t *Tile) (TileState, error) {
	st := TileState{Tile: t}
	path := t.LedgerPath(dir)
	if _, err := os.Stat(path); errors.Is(err, fs.ErrNotExist) {
		st.Problem = "never run (no ledger " + path + ")"
		return st, nil
	}
	l, err := db.Open(ctx, path, db.Options{ReadOnly: true})
	if err != nil {
		return st, err
	}
	defer l.Close()
	run, err := l.LastCompleteRun(ctx)
	if err != nil {
		return st, err
	}
	if run == nil {
		st.Problem = "no complete run in " + path
		return st, nil
	}
	st.Run = run
	if run.CampaignHash != t.CampaignHash {
		st.Problem = fmt.Sprintf("its last complete run (%d) was made from another campaign (hash %.12s, the plan's tile has %.12s)", run.ID, run.CampaignHash, t.CampaignHash)
		return st, nil
	}
	cats, err := l.RunCatalogs(ctx, run.ID)
	if err != nil {
		return st, err
	}
	for _, c := range cats {
		if want := t.Shards[c.Name]; c.FileSHA256 != want {
			st.Problem = fmt.Sprintf("its last complete run (%d) read another shard of %s than the split wrote", run.ID, c.Name)
			return st, nil
		}
	}
	if len(cats) != len(t.Shards) {
		st.Problem = fmt.Sprintf("its last complete run (%d) read %d catalogs, the tile has %d", run.ID, len(cats), len(t.Shards))
	}
	return st, nil
}
