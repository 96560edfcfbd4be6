package tiling

import (
	"context"
	"fmt"

	"starvet/dispatch"
)

// gatherTask names the final task of a dispatch.
const gatherTask = "gather"

// DispatchOptions tune Dispatch.
type DispatchOptions struct {
	// Exe is the starvet program every task runs (an absolute path; on a
	// cluster, one every node can reach).
	Exe string
	// Ledger is the campaign ledger the gather appends to.
	Ledger string
	// RunArgs are added to each tile's `run` (e.g. --workers 2, --full).
	RunArgs []string
	// All runs every tile, not only those whose ledger is not up to date
	// with the split (never run, failed, or made from other shards).
	All      bool
	Executor dispatch.Executor
}

// DispatchReport is what a Dispatch did.
type DispatchReport struct {
	Tiles   int      // tiles in the plan
	Ran     []string // tiles run (or submitted) now
	Outcome *dispatch.Outcome
}

// Dispatch runs, through the executor, every tile of the split in dir
// that is not up to date, then the gather of all tiles. Run again, it runs
// only the tiles that failed or are missing.
func Dispatch(ctx context.Context, dir string, opt DispatchOptions) (*DispatchReport, error) {
	p, err := ReadPlan(dir)
	if err != nil {
		return nil, err
	}
	states, err := States(ctx, dir, p)
	if err != nil {
		return nil, err
	}
	job := dispatch.Job{Dir: dir, Final: &dispatch.Task{Name: gatherTask,
		Args: []string{opt.Exe, "--quiet", "gather", dir, "--ledger", opt.Ledger}}}
	names := []string{gatherTask}
	for _, st := range states {
		if st.Problem == "" && !opt.All {
			continue
		}
		args := append([]string{opt.Exe, "--quiet", "run"}, opt.RunArgs...)
		job.Tasks = append(job.Tasks, dispatch.Task{Name: st.Tile.Name, Args: append(args, st.Tile.CampaignPath(dir))})
		names = append(names, st.Tile.Name)
	}
	// The gather always runs: the ledger gains a run even when no tile
	// changed, as a single run's would.
	if err := dispatch.Forget(dir, names...); err != nil {
		return nil, err
	}
	out, err := opt.Executor.Run(ctx, job)
	if err != nil {
		return nil, fmt.Errorf("dispatch %s: %w", dir, err)
	}
	return &DispatchReport{Tiles: len(p.Tiles), Ran: out.Ran, Outcome: out}, nil
}
