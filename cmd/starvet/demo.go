package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/orbit"
	"starvet/report"
	"starvet/scenario"
	"starvet/verdict"
	"starvet/vetting"
)

func runDemo(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "demo", "[options] [DIR]",
		"Write an invented survey campaign (fictional catalogs with injected hypervelocity stars,\n"+
			"runaways and artefacts, plus its ground truth) into DIR (default ./starvet-demo), vet it\n"+
			"into a ledger, write the report, simulate a catalog update, re-vet incrementally, and\n"+
			"print the recovery figures against the truth.")
	stars := fs.Int("stars", scenario.DefaultStars, "primary stars in the invented catalog")
	seed := fs.Uint64("seed", 7, "seed of the invented scenario")
	workers := fs.Int("workers", 0, "worker goroutines (0: one per core)")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 1 {
		return usageError("demo wants at most one directory, got %d arguments", len(pos))
	}
	dir := "starvet-demo"
	if len(pos) == 1 {
		dir = pos[0]
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	// A fresh ledger each time: the demo's first run is a full run.
	for _, suffix := range []string{"", "-wal", "-shm", ".lock"} {
		_ = os.Remove(filepath.Join(dir, "starvet.db"+suffix))
	}
	out := env.Stdout
	t0 := time.Now()
	sc, err := scenario.Generate(scenario.Config{Seed: *seed, Stars: *stars}, dir)
	if err != nil {
		return err
	}
	fmt.Fprintf(out, "== invented scenario (seed %d): %d primary stars written to %s in %s\n", *seed, len(sc.Truth), dir, time.Since(t0).Round(time.Millisecond))

	e := &vetting.Engine{Log: env.Log, Progress: newProgress(env), Workers: *workers, ToolVersion: toolVersion}
	run := func(title string) (*vetting.Summary, error) {
		c, err := campaign.Load(sc.CampaignPath)
		if err != nil {
			return nil, err
		}
		fmt.Fprintf(out, "\n== %s: starvet run %s\n", title, sc.CampaignPath)
		sum, err := e.Run(ctx, c, vetting.RunOptions{})
		if err != nil {
			return nil, err
		}
		printSummary(out, sum)
		return sum, nil
	}
	first, err := run("release 1")
	if err != nil {
		return err
	}
	if err := scenario.Update(sc, dir, *seed+1); err != nil {
		return err
	}
	fmt.Fprintf(out, "\n== catalog update: release %d revises the astrometry or adds spectra for %d stars\n", sc.Release, len(sc.Changed))
	second, err := run(fmt.Sprintf("release %d, incremental", sc.Release))
	if err != nil {
		return err
	}
	reportDir := filepath.Join(dir, "report")
	if _, err := makeReport(ctx, second.LedgerPath, second.RunID, reportDir, report.Options{}); err != nil {
		return err
	}

	l, err := db.Open(ctx, second.LedgerPath, db.Options{ReadOnly: true})
	if err != nil {
		return err
	}
	defer l.Close()
	verdicts := map[string]scenario.Verdict{}
	if err := l.List(ctx, db.ListFilter{Run: second.RunID}, func(v db.VerdictRow) error {
		verdicts[v.StarID] = scenario.Verdict{Status: verdict.Status(v.Status), Origin: orbit.Origin(v.Origin)}
		return nil
	}); err != nil {
		return err
	}
	fig := scenario.Score(sc.Truth, verdicts)
	fmt.Fprintf(out, "\n== where everything is\n")
	fmt.Fprintf(out, "  campaign   %s\n  truth      %s\n  ledger     %s (runs %d and %d)\n  report     %s\n",
		sc.CampaignPath, sc.TruthPath, second.LedgerPath, first.RunID, second.RunID, filepath.Join(reportDir, "index.html"))
	fmt.Fprintf(out, "  try        starvet why --ledger %s <star id>; starvet diff --ledger %s\n", second.LedgerPath, second.LedgerPath)
	fmt.Fprintf(out, "\n== recovery against the truth (run %d)\n", second.RunID)
	fmt.Fprintf(out, "  completeness    %5.1f%%  (%d of %d injected unbound stars with adequate data and a margin of at least %.0f sigma end unbound; target >= %.0f%%)\n",
		100*fig.Completeness, fig.NCompletenessHits, fig.NCompletenessDenominator, scenario.DecidableSigma, 100*scenario.TargetCompleteness)
	fmt.Fprintf(out, "                  %5.1f%%  (%d of %d counting every margin, including stars within %.0f sigma of the escape speed)\n",
		100*fig.CompletenessAdequate, fig.NAdequateHits, fig.NAdequateDenominator, scenario.DecidableSigma)
	fmt.Fprintf(out, "  contamination   %5.1f%%  (%d of %d stars ending unbound are truly bound or artefacts; target <= %.0f%%)\n",
		100*fig.Contamination, fig.NContaminating, fig.NUnbound, 100*scenario.TargetContamination)
	fmt.Fprintf(out, "  origin accuracy %5.1f%%  (Galactic-Centre ejectees ending unbound traced to the centre, of %d)\n",
		100*fig.OriginAccuracy, fig.NOriginDenominator)
	fmt.Fprintf(out, "  details: %s\n", fig)
	fmt.Fprintf(out, "\nAn \"unbound\" verdict depends on the adopted potential (%s) and Solar parameters;\nit marks a candidate for follow-up observations, not a discovery.\n", second.ModelName)
	fmt.Fprintf(out, "demo finished in %s\n", time.Since(t0).Round(time.Millisecond))
	if fig.MeetsTargets() {
		fmt.Fprintf(out, "recovery targets met (completeness >= %.0f%%, contamination <= %.0f%%)\n", 100*scenario.TargetCompleteness, 100*scenario.TargetContamination)
	} else {
		fmt.Fprintf(out, "recovery targets MISSED for this seed (completeness >= %.0f%%, contamination <= %.0f%%); see the details above\n", 100*scenario.TargetCompleteness, 100*scenario.TargetContamination)
	}
	return nil
}
