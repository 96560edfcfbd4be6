package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"starvet/campaign"
	"starvet/dispatch"
	"starvet/tiling"
)

func runDispatch(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "dispatch", "[options] DIR --ledger OUT.db",
		"Run the tiles of a split campaign (see `starvet tile`) that are not up to date, then\n"+
			"gather them into OUT.db. Run again, it runs only the tiles that failed or are missing.\n"+
			"--executor local runs --jobs tiles at once on this machine; --executor slurm submits the\n"+
			"tiles as one Slurm job array and the gather as a job that runs only when every tile\n"+
			"succeeded (afterok, and cancelled if one fails). The starvet program and DIR must be on a\n"+
			"file system every node sees.")
	ledger := fs.String("ledger", "", "campaign ledger the gather appends to (required)")
	// The Slurm flags default to the campaign's [slurm] table.
	executor := fs.String("executor", "local", "where the tiles run: local or slurm")
	jobs := fs.Int("jobs", 1, "local: tiles run at once")
	workers := fs.Int("workers", 0, "worker goroutines of each tile run (0: one per core of its machine)")
	full := fs.Bool("full", false, "run every tile and recompute every star")
	partition := fs.String("partition", "", "slurm: partition")
	account := fs.String("account", "", "slurm: account")
	timeLimit := fs.String("time", "", "slurm: time limit of each array task, e.g. 02:00:00")
	mem := fs.String("mem", "", "slurm: memory of each array task, e.g. 8G")
	perTask := fs.Int("tiles-per-task", 0, "slurm: tiles each array task runs (0: 1, more when the array would exceed MaxArraySize)")
	maxRunning := fs.Int("max-running", 0, "slurm: most array tasks running at once (0: no limit)")
	noWait := fs.Bool("no-wait", false, "slurm: return after submitting, printing the job ids")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError("dispatch wants one split directory, got %d arguments", len(pos))
	}
	if *ledger == "" {
		return usageError("dispatch needs --ledger OUT.db")
	}
	dir, err := filepath.Abs(pos[0])
	if err != nil {
		return err
	}
	out, err := filepath.Abs(*ledger)
	if err != nil {
		return err
	}
	exe, err := os.Executable()
	if err != nil {
		return err
	}
	var ex dispatch.Executor
	switch *executor {
	case "local":
		ex = dispatch.Local{Jobs: *jobs, Stdout: env.Stdout}
	case "slurm":
		plan, err := tiling.ReadPlan(dir)
		if err != nil {
			return err
		}
		c, err := campaign.Load(plan.Campaign)
		if err != nil {
			return err
		}
		o := c.Slurm
		set := map[string]bool{}
		fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
		pick := func(name, flagValue, campaignValue string) string {
			if set[name] {
				return flagValue
			}
			return campaignValue
		}
		pickInt := func(name string, flagValue, campaignValue int) int {
			if set[name] {
				return flagValue
			}
			return campaignValue
		}
		ex = dispatch.Slurm{Partition: pick("partition", *partition, o.Partition), Account: pick("account", *account, o.Account),
			Time: pick("time", *timeLimit, o.Time), Mem: pick("mem", *mem, o.Mem),
			TasksPerArrayTask: pickInt("tiles-per-task", *perTask, o.TilesPerTask), MaxRunning: pickInt("max-running", *maxRunning, o.MaxRunning),
			Wait: !*noWait}
	default:
		return usageError("--executor %q: want local or slurm", *executor)
	}
	var runArgs []string
	if *workers > 0 {
		runArgs = append(runArgs, "--workers", fmt.Sprint(*workers))
	}
	if *full {
		runArgs = append(runArgs, "--full")
	}
	t0 := time.Now()
	rep, err := tiling.Dispatch(ctx, dir, tiling.DispatchOptions{Exe: exe, Ledger: out, RunArgs: runArgs, All: *full, Executor: ex})
	if err != nil {
		return err
	}
	w := env.Stdout
	o := rep.Outcome
	fmt.Fprintf(w, "%d of %d tiles run (%s executor)", len(rep.Ran), rep.Tiles, *executor)
	if len(o.JobIDs) > 0 {
		fmt.Fprintf(w, ", Slurm jobs %s", strings.Join(o.JobIDs, " "))
	}
	fmt.Fprintf(w, " in %s\n", time.Since(t0).Round(time.Millisecond))
	if *executor == "slurm" && *noWait {
		fmt.Fprintf(w, "submitted; run `starvet dispatch %s --ledger %s` again later to rerun failed tiles\n", pos[0], *ledger)
		return nil
	}
	for _, f := range o.Failed {
		fmt.Fprintf(w, "  tile %s\n", f)
	}
	switch {
	case len(o.Failed) > 0:
		return fmt.Errorf("%d tiles failed; the gather did not run; run dispatch again to rerun only those", len(o.Failed))
	case o.FinalFailure != nil:
		return fmt.Errorf("the gather failed: %s", o.FinalFailure)
	case !o.FinalOK:
		return fmt.Errorf("the gather did not run")
	}
	fmt.Fprintf(w, "gathered into %s (log %s)\n", *ledger, filepath.Join(dir, "logs", "gather.log"))
	return nil
}
