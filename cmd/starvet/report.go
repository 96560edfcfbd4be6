package main

import (
	"context"
	"fmt"

	"starvet/campaign"
	"starvet/db"
	"starvet/report"
)

func runReport(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "report", "[--run N] [--ledger PATH] -o DIR",
		"Write a static HTML page with plots (SVG) for one run (default: the latest\n"+
			"complete run) into DIR: status counts, rejection reasons, speed against\n"+
			"distance, sky map, p_unbound histogram, plane crossings, candidate table.\n"+
			"The page needs no network.")
	ledger := fs.String("ledger", defaultLedger, "ledger file")
	run := fs.Int64("run", 0, "run id (0 = latest complete run)")
	out := fs.String("o", "", "output directory (created if missing)")
	escR := fs.Float64("escape-radius-kpc", 0, "radius the escape-speed curve escapes to (0 = infinity); the ledger does not record the run's")
	gcR := fs.Float64("gc-radius-kpc", 0, fmt.Sprintf("centre radius on the crossing plot (0 = %g)", report.DefaultGCRadiusKpc))
	camp := fs.String("campaign", "", "take the escape radius, centre radius and Solar distance from this campaign file (checked against the run's campaign hash)")
	if err := parseFlags(env, fs, args); err != nil {
		return err
	}
	switch {
	case fs.NArg() > 0:
		return usageError("report takes no arguments, got %q", fs.Args())
	case *out == "":
		return usageError("report needs -o DIR")
	case *run < 0:
		return usageError("--run %d: want a positive run id or 0", *run)
	case *escR < 0:
		return usageError("--escape-radius-kpc %g: want 0 or more", *escR)
	case *gcR < 0:
		return usageError("--gc-radius-kpc %g: want 0 or more", *gcR)
	case *camp != "" && (*escR > 0 || *gcR > 0):
		return usageError("--campaign excludes --escape-radius-kpc and --gc-radius-kpc")
	}
	opt := report.Options{EscapeRadiusKpc: *escR, GCRadiusKpc: *gcR}
	if *camp != "" {
		c, err := campaign.Load(*camp)
		if err != nil {
			return err
		}
		opt = report.Options{EscapeRadiusKpc: c.Potential.EscapeRadiusKpc, GCRadiusKpc: c.Kinematics.GCRadiusKpc,
			SunDistanceKpc: c.Galaxy.SunDistanceKpc}
		if opt.GCRadiusKpc == 0 {
			opt.GCRadiusKpc = report.DefaultGCRadiusKpc
		}
		same, id, err := runUsedCampaign(ctx, *ledger, *run, c.Hash())
		if err != nil {
			return err
		}
		if same {
			opt.SettingsSource = fmt.Sprintf("from campaign %s, the one run %d used", *camp, id)
		} else {
			opt.SettingsSource = fmt.Sprintf("from campaign %s, which is NOT the one run %d used", *camp, id)
			env.Log.Warn().Str("campaign", *camp).Int64("run", id).Msg("the campaign's settings differ from the run's; the page says so")
		}
	}
	sum, err := makeReport(ctx, *ledger, *run, *out, opt)
	if err != nil {
		return err
	}
	fmt.Fprintf(env.Stdout, "report of run %d: %s\n", sum.RunID, sum.Index)
	return nil
}

// makeReport opens the ledger read-only and writes the report of runID
// (0 = latest complete run) into dir.
func makeReport(ctx context.Context, ledgerPath string, runID int64, dir string, opt report.Options) (*report.Summary, error) {
	l, err := openLedgerRO(ctx, ledgerPath)
	if err != nil {
		return nil, err
	}
	defer l.Close()
	return report.Write(ctx, l, runID, dir, opt)
}

// runUsedCampaign reports whether run runID (0 = latest complete) was made
// from a campaign with this hash, and which run that was.
func runUsedCampaign(ctx context.Context, ledgerPath string, runID int64, hash string) (bool, int64, error) {
	l, err := openLedgerRO(ctx, ledgerPath)
	if err != nil {
		return false, 0, err
	}
	defer l.Close()
	var r *db.Run
	if runID == 0 {
		if r, err = l.LastCompleteRun(ctx); err == nil && r == nil {
			err = fmt.Errorf("ledger %s: %w", ledgerPath, db.ErrNoRuns)
		}
	} else {
		r, err = l.Run(ctx, runID)
	}
	if err != nil {
		return false, 0, err
	}
	return r.CampaignHash == hash, r.ID, nil
}
