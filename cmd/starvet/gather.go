package main

import (
	"context"
	"fmt"
	"time"

	"starvet/tiling"
	"starvet/verdict"
)

func runGather(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "gather", "[options] DIR --ledger OUT.db",
		"Gather the ledgers of a split campaign's tiles (see `starvet tile`) into one run of the\n"+
			"campaign ledger OUT.db: every star once, with its inputs, matches, reasons and verdict as\n"+
			"its tile computed them, the catalogs' counts and the quarantined rows of the split. A set\n"+
			"with a tile never run, run on other shards or from another campaign, a directory that is\n"+
			"not a tile of the plan, or a star two tiles hold is refused with the list of problems.")
	ledger := fs.String("ledger", "", "campaign ledger to append the gathered run to (required)")
	wait := fs.Duration("wait", 10*time.Second, "how long to wait for a ledger another run is writing")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError("gather wants one split directory, got %d arguments", len(pos))
	}
	if *ledger == "" {
		return usageError("gather needs --ledger OUT.db")
	}
	s, err := tiling.Gather(ctx, pos[0], tiling.GatherOptions{Ledger: *ledger, ToolVersion: toolVersion, LockWait: *wait})
	if err != nil {
		return err
	}
	w := env.Stdout
	fmt.Fprintf(w, "run %d gathered from %d tiles into %s in %s\n", s.RunID, s.Tiles, *ledger, s.Elapsed.Round(time.Millisecond))
	fmt.Fprintf(w, "stars: %d copied from the tiles, %d carried forward", s.Computed, s.Carried)
	if s.PrevRunID > 0 {
		fmt.Fprintf(w, " from run %d", s.PrevRunID)
	}
	fmt.Fprintln(w)
	for _, st := range verdict.All() {
		if n := s.Counts[string(st)]; n > 0 {
			fmt.Fprintf(w, "  %-10s %d\n", st, n)
		}
	}
	return nil
}
