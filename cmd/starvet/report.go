package main

import (
	"context"
	"flag"
	"fmt"
	"path/filepath"
	"strings"

	"starvet/campaign"
	"starvet/db"
	"starvet/internal/numfmt"
	"starvet/report"
	"starvet/scenario"
)

func runReport(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "report", "[--run N] [--ledger PATH] -o DIR",
		"Write a static HTML page with plots (SVG) for one run (default: the latest\n"+
			"complete run) into DIR: status counts, rejection reasons, speed against\n"+
			"distance, sky map, p_unbound histogram, plane crossings, candidate table,\n"+
			"and the latest weighing of the run (starvet weigh) with its plots.\n"+
			"The page needs no network. A run that recorded its settings in the ledger is\n"+
			"drawn with them; --escape-radius-kpc, --gc-radius-kpc and --campaign are for\n"+
			"older runs, which recorded none.")
	ledger := fs.String("ledger", defaultLedger, "ledger file")
	run := fs.Int64("run", 0, "run id (0 = latest complete run)")
	out := fs.String("o", "", "output directory (created if missing)")
	escR := fs.Float64("escape-radius-kpc", 0, "for a run without recorded settings: radius the escape-speed curve escapes to (0 = infinity)")
	gcR := fs.Float64("gc-radius-kpc", 0, "for a run without recorded settings: centre radius on the crossing plot (0 = "+numfmt.Exact(report.DefaultGCRadiusKpc)+")")
	camp := fs.String("campaign", "", "for a run without recorded settings: take the escape radius, centre radius and Solar distance from this campaign file (checked against the run's campaign hash)")
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
		return usageError("--escape-radius-kpc %s: want 0 or more", numfmt.Exact(*escR))
	case *gcR < 0:
		return usageError("--gc-radius-kpc %s: want 0 or more", numfmt.Exact(*gcR))
	case *camp != "" && (*escR > 0 || *gcR > 0):
		return usageError("--campaign excludes --escape-radius-kpc and --gc-radius-kpc")
	}
	opt, err := reportOptions(ctx, env, fs, *ledger, *run, *camp, report.Options{EscapeRadiusKpc: *escR, GCRadiusKpc: *gcR})
	if err != nil {
		return err
	}
	sum, err := makeReport(ctx, *ledger, *run, *out, opt)
	if err != nil {
		return err
	}
	fmt.Fprintf(env.Stdout, "report of run %d: %s\n", sum.RunID, sum.Index)
	return nil
}

// reportOptions checks the override flags against the run and, with
// --campaign, takes the plot settings from the campaign file.
func reportOptions(ctx context.Context, env *Env, fs *flag.FlagSet, ledger string, run int64, camp string, opt report.Options) (report.Options, error) {
	var c *campaign.Campaign
	if camp != "" {
		var err error
		if c, err = campaign.Load(camp); err != nil {
			return opt, err
		}
	}
	var overrides []string
	fs.Visit(func(f *flag.Flag) {
		if f.Name == "escape-radius-kpc" || f.Name == "gc-radius-kpc" || f.Name == "campaign" {
			overrides = append(overrides, "--"+f.Name)
		}
	})
	if len(overrides) == 0 {
		return opt, nil
	}
	r, recorded, err := runRecordedSettings(ctx, ledger, run)
	if err != nil {
		return opt, err
	}
	if recorded {
		return opt, fmt.Errorf("run %d recorded its settings in the ledger and is drawn with them; %s only serve runs that recorded none",
			r.ID, strings.Join(overrides, " and "))
	}
	if c != nil {
		opt = campaignOptions(env, c, camp, r)
	}
	return opt, nil
}

// makeReport opens the ledger read-only and writes the report of runID
// (0 = latest complete run) into dir.
func makeReport(ctx context.Context, ledgerPath string, runID int64, dir string, opt report.Options) (*report.Summary, error) {
	l, err := openLedgerRO(ctx, ledgerPath)
	if err != nil {
		return nil, err
	}
	defer l.Close()
	if opt.Truth == nil {
		// An invented scenario keeps its halo beside its ledger: mark it.
		if t, err := scenario.LoadHaloTruth(filepath.Dir(ledgerPath)); err == nil {
			opt.Truth = &report.HaloTruth{VEscKms: t.VEscSunInfKms, M200TailMsun: t.M200RelationMsun, M200Msun: t.M200Msun}
		}
	}
	return report.Write(ctx, l, runID, dir, opt)
}

// campaignOptions takes the plot settings of an older run, which
// recorded none, from a campaign file, saying whether it is the run's.
func campaignOptions(env *Env, c *campaign.Campaign, file string, r *db.Run) report.Options {
	opt := report.Options{EscapeRadiusKpc: c.Potential.EscapeRadiusKpc, GCRadiusKpc: c.Kinematics.GCRadiusKpc,
		SunDistanceKpc: c.Galaxy.SunDistanceKpc}
	if opt.GCRadiusKpc == 0 {
		opt.GCRadiusKpc = report.DefaultGCRadiusKpc
	}
	if r.CampaignHash == c.Hash() {
		opt.SettingsSource = fmt.Sprintf("from campaign %s, the one run %d used", file, r.ID)
	} else {
		opt.SettingsSource = fmt.Sprintf("from campaign %s, which is NOT the one run %d used", file, r.ID)
		env.Log.Warn().Str("campaign", file).Int64("run", r.ID).Msg("the campaign's settings differ from the run's; the page says so")
	}
	return opt
}

func lookupRun(ctx context.Context, l *db.Ledger, runID int64) (*db.Run, error) {
	if runID != 0 {
		return l.Run(ctx, runID)
	}
	r, err := l.LastCompleteRun(ctx)
	if err == nil && r == nil {
		err = fmt.Errorf("ledger %s: %w", l.Path(), db.ErrNoRuns)
	}
	return r, err
}

// runRecordedSettings returns run runID (0 = latest complete) and whether
// it recorded its settings.
func runRecordedSettings(ctx context.Context, ledgerPath string, runID int64) (*db.Run, bool, error) {
	l, err := openLedgerRO(ctx, ledgerPath)
	if err != nil {
		return nil, false, err
	}
	defer l.Close()
	r, err := lookupRun(ctx, l, runID)
	if err != nil {
		return nil, false, err
	}
	s, err := l.RunSettings(ctx, r.ID)
	if err != nil {
		return nil, false, err
	}
	return r, s.Recorded(), nil
}
