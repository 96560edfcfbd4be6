package main

import (
	"context"
	"fmt"
	"io"

	"starvet/db"
)

func runDiff(ctx context.Context, env *Env, args []string) error {
	var af auditFlags
	fs := newFlags(env, "diff", "[--ledger PATH] [--json] [--limit N | --all] [RUN_A [RUN_B]]",
		"Status transitions between two runs (\"old -> new\" with counts), then the stars\n"+
			"that changed. With no runs: the last two complete runs; with one: that run\n"+
			"against the latest complete run. A star missing from a run shows as (none).")
	af.register(fs)
	limit := fs.Int("limit", 50, "at most this many per-star lines")
	all := fs.Bool("all", false, "print every changed star (overrides --limit)")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 2 {
		return usageError("diff takes at most two run ids, got %d arguments", len(pos))
	}
	if *limit < 0 {
		return usageError("--limit %d: want 0 or more", *limit)
	}
	var ids [2]int64
	for i, s := range pos {
		if ids[i], err = parseRunID(s); err != nil {
			return err
		}
	}
	n := *limit
	if *all {
		n = -1
	}
	l, err := openLedgerRO(ctx, af.ledger)
	if err != nil {
		return err
	}
	defer l.Close()
	d, err := l.DiffN(ctx, ids[0], ids[1], n)
	if err != nil {
		return err
	}
	if af.json {
		return writeJSON(env.Stdout, diffJSON(d))
	}
	writeDiff(env.Stdout, d)
	return nil
}

func diffJSON(d *db.DiffResult) map[string]any {
	trans := []map[string]any{}
	for _, t := range d.Transitions {
		trans = append(trans, map[string]any{"from": t.From, "to": t.To, "count": t.Count})
	}
	stars := []map[string]any{}
	for _, s := range d.Stars {
		stars = append(stars, map[string]any{"star_id": s.StarID, "from": s.From, "to": s.To})
	}
	return map[string]any{"run_a": d.RunA, "run_b": d.RunB, "changed": d.Changed,
		"unchanged": d.Unchanged, "transitions": trans, "stars": stars, "stars_truncated": int64(len(d.Stars)) < d.Changed}
}

func writeDiff(w io.Writer, d *db.DiffResult) {
	fmt.Fprintf(w, "run %d -> run %d: %d stars changed status, %d unchanged\n", d.RunA, d.RunB, d.Changed, d.Unchanged)
	if d.Changed == 0 {
		return
	}
	width := 0
	for _, t := range d.Transitions {
		width = max(width, len(t.From)+len(t.To)+4)
	}
	fmt.Fprintf(w, "\ntransitions:\n")
	for _, t := range d.Transitions {
		fmt.Fprintf(w, "  %-*s %d\n", width, t.From+" -> "+t.To, t.Count)
	}
	if len(d.Stars) > 0 {
		fmt.Fprintf(w, "\nstars:\n")
		for _, s := range d.Stars {
			fmt.Fprintf(w, "  %s: %s -> %s\n", s.StarID, s.From, s.To)
		}
	}
	if rest := d.Changed - int64(len(d.Stars)); rest > 0 {
		fmt.Fprintf(w, "  ... %d more (--limit N or --all to see them)\n", rest)
	}
}
