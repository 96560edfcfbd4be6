package main

import (
	"context"
	"fmt"
	"maps"
	"slices"
	"time"

	"starvet/campaign"
	"starvet/tiling"
	"starvet/vetting"
)

func runTile(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "tile", "[options] CAMPAIGN.toml --into DIR",
		"Split a campaign into HEALPix sky tiles (nested scheme) for runs on many machines. The\n"+
			"catalogs are read once; each primary star belongs to the tile holding its position at the\n"+
			"primary epoch. Each tile gets a directory DIR/tiles/<tile> with a shard of every catalog\n"+
			"(its own stars plus every row within a margin around it, computed from the data) and a\n"+
			"campaign file that `starvet run` takes. DIR/plan.json lists the tiles, the margin and the\n"+
			"counts. Splitting again into the same DIR (after a catalog update) keeps the order and\n"+
			"the tiles' ledgers, so only tiles whose shards changed need to run again.")
	into := fs.String("into", "", "directory to write the tiles into (required)")
	order := fs.Int("order", -1, "HEALPix order of the tiles (default: chosen from --stars-per-tile)")
	perTile := fs.Int("stars-per-tile", tiling.DefaultStarsPerTile, "most primary stars a tile may own, when --order is not given")
	hops := fs.Int("hops", tiling.DefaultHops, "candidate-pair steps from an owned star the margin keeps complete")
	strict := fs.Bool("strict", false, "stop at the first bad input row instead of quarantining it")
	workers := fs.Int("workers", 0, "worker goroutines (0: one per core)")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError("tile wants one campaign file, got %d arguments", len(pos))
	}
	if *into == "" {
		return usageError("tile needs --into DIR")
	}
	if *order > 29 || *order < -1 {
		return usageError("--order %d: want 0..29", *order)
	}
	c, err := campaign.Load(pos[0])
	if err != nil {
		return err
	}
	t0 := time.Now()
	e := &vetting.Engine{Log: env.Log, Progress: newProgress(env), Workers: *workers, ToolVersion: toolVersion}
	p, err := tiling.Split(ctx, e, c, *into, tiling.SplitOptions{Order: *order, StarsPerTile: *perTile, Hops: *hops, Strict: *strict})
	if err != nil {
		return err
	}
	elapsed := time.Since(t0)
	w := env.Stdout
	fmt.Fprintf(w, "split %s into %d tiles at HEALPix order %d in %s\n", c.File, len(p.Tiles), p.Order, elapsed.Round(time.Millisecond))
	for _, name := range slices.Sorted(maps.Keys(p.Reaches)) {
		r := p.Reaches[name]
		fmt.Fprintf(w, "  %-20s search radius %.4g\", largest proper-motion shift %.4g\", prior %.4g\n", name, r.SearchArcsec, r.ShiftArcsec, p.Prior[name])
	}
	fmt.Fprintf(w, "reach %.4g\" (duplicate radius %.4g\"); margin %.4g\" keeps %d steps complete (fine order %d)\n",
		p.ReachArcsec, c.Match.DuplicateRadiusArcsec, p.MarginArcsec, p.Hops, p.FineOrder)
	var owned []int
	rows, shardRows := 0, 0
	for _, t := range p.Tiles {
		owned = append(owned, t.Owned)
		for _, n := range t.Rows {
			shardRows += n
		}
	}
	for _, cr := range p.Catalogs {
		rows += int(cr.RowsKept)
	}
	slices.Sort(owned)
	fmt.Fprintf(w, "stars per tile: least %d, median %d, most %d\n", owned[0], owned[len(owned)/2], owned[len(owned)-1])
	fmt.Fprintf(w, "shard rows %d for %d catalog rows kept (%.2f%% in margins)\n", shardRows, rows, 100*float64(shardRows-rows)/float64(max(rows, 1)))
	fmt.Fprintf(w, "%.0f rows read per second\n", float64(rows)/elapsed.Seconds())
	fmt.Fprintf(w, "plan written to %s/%s; run the tiles with `starvet dispatch %s`\n", *into, tiling.PlanFile, *into)
	return nil
}
