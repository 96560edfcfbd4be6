package main

import (
	"context"
	"fmt"
	"io"
	"sort"
	"time"

	"starvet/campaign"
	"starvet/verdict"
	"starvet/vetting"
)

func runRun(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "run", "[options] CAMPAIGN.toml",
		"Vet a campaign into its SQLite ledger: ingest, cross-match, quality cuts, Galactic\n"+
			"kinematics and verdicts. Stars whose inputs, rule set and model settings are unchanged\n"+
			"since the last complete run are carried forward; --full recomputes every star.\n"+
			"An \"unbound\" verdict depends on the adopted potential and Solar parameters: it marks a\n"+
			"candidate for follow-up, not a discovery.")
	ledger := fs.String("ledger", "", "ledger file (default: the campaign's ledger, or starvet.db beside the campaign)")
	full := fs.Bool("full", false, "recompute every star")
	strict := fs.Bool("strict", false, "stop at the first bad input row instead of quarantining it")
	rulesPath := fs.String("rules", "", "rule-set file replacing the campaign's")
	wait := fs.Duration("wait", 10*time.Second, "how long to wait for a ledger another run is writing")
	workers := fs.Int("workers", 0, "worker goroutines (0: one per core)")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError("run wants one campaign file, got %d arguments", len(pos))
	}
	c, err := campaign.Load(pos[0])
	if err != nil {
		return err
	}
	e := &vetting.Engine{Log: env.Log, Progress: newProgress(env), Workers: *workers, ToolVersion: toolVersion}
	sum, err := e.Run(ctx, c, vetting.RunOptions{LedgerPath: *ledger, Full: *full, Strict: *strict,
		RulesOverride: *rulesPath, LockWait: *wait})
	if err != nil {
		return err
	}
	printSummary(env.Stdout, sum)
	return nil
}

func printSummary(w io.Writer, s *vetting.Summary) {
	fmt.Fprintf(w, "run %d written to %s in %s\n", s.RunID, s.LedgerPath, s.Elapsed.Round(time.Millisecond))
	for _, c := range s.Catalogs {
		fmt.Fprintf(w, "  %-20s release %-8s rows read %d = kept %d + quarantined %d\n", c.Name, c.Release, c.RowsRead, c.RowsKept, c.RowsQuarantined)
	}
	fmt.Fprintf(w, "stars: %d recomputed, %d carried forward", s.Computed, s.Carried)
	if s.RecomputeAll != "" {
		fmt.Fprintf(w, " (all recomputed: %s)", s.RecomputeAll)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "status counts (model %s):\n", s.ModelName)
	for _, st := range verdict.All() {
		if n := s.Counts[st]; n > 0 {
			fmt.Fprintf(w, "  %-10s %d\n", st, n)
		}
	}
	if s.PrevRunID > 0 {
		fmt.Fprintf(w, "transitions since run %d:\n", s.PrevRunID)
		keys := make([]string, 0, len(s.Transitions))
		for k := range s.Transitions {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		if len(keys) == 0 {
			fmt.Fprintln(w, "  none")
		}
		for _, k := range keys {
			fmt.Fprintf(w, "  %-28s %d\n", k, s.Transitions[k])
		}
	}
	fmt.Fprintf(w, "rows quarantined: %d\n", s.Quarantined)
	for _, warn := range s.Warnings {
		fmt.Fprintf(w, "WARNING: %s\n", warn)
	}
	if s.Counts[verdict.Unbound] > 0 {
		fmt.Fprintln(w, "note: \"unbound\" depends on the adopted potential and Solar parameters; these are candidates for follow-up, not discoveries.")
	}
}
