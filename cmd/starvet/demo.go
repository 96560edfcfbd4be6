package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/orbit"
	"starvet/inference"
	"starvet/report"
	"starvet/scenario"
	"starvet/verdict"
	"starvet/vetting"
)

func runDemo(ctx context.Context, env *Env, args []string) error {
	o, err := parseDemoFlags(env, args)
	if err != nil {
		return err
	}
	if err := freshDemoDir(o.dir); err != nil {
		return err
	}
	out := env.Stdout
	t0 := time.Now()
	sc, err := scenario.Generate(scenario.Config{Seed: o.seed, Stars: o.stars, HaloScale: o.haloScale}, o.dir)
	if err != nil {
		return err
	}
	fmt.Fprintf(out, "== invented scenario (seed %d): %d primary stars written to %s in %s\n", o.seed, len(sc.Truth), o.dir, time.Since(t0).Round(time.Millisecond))
	first, second, err := vetBothReleases(ctx, env, o, sc)
	if err != nil {
		return err
	}
	fig, err := scoreAgainstTruth(ctx, second, sc.Truth)
	if err != nil {
		return err
	}
	reportDir := filepath.Join(o.dir, "report")
	printDemoPlaces(out, sc, first, second, reportDir)
	printRecovery(out, second, fig)
	if err := weighDemo(ctx, env, o, sc, second); err != nil {
		return err
	}
	if _, err := makeReport(ctx, second.LedgerPath, second.RunID, reportDir, report.Options{}); err != nil {
		return err
	}
	fmt.Fprintf(out, "demo finished in %s\n", time.Since(t0).Round(time.Millisecond))
	printTargets(out, fig)
	return nil
}

// weighDemo weighs the Galaxy from the second run's stars and prints both
// estimates against the halo the scenario simulated.
func weighDemo(ctx context.Context, env *Env, o demoOptions, sc *scenario.Scenario, run *vetting.Summary) error {
	out := env.Stdout
	c, err := campaign.Load(sc.CampaignPath)
	if err != nil {
		return err
	}
	l, err := db.Open(ctx, run.LedgerPath, db.Options{})
	if err != nil {
		return err
	}
	defer l.Close()
	r, err := inference.Weigh(ctx, l, c, inference.Options{RunID: run.RunID, InfallOnly: true, Workers: o.workers, ToolVersion: toolVersion})
	if err != nil {
		return err
	}
	truth, err := scenario.LoadHaloTruth(sc.Dir)
	if err != nil {
		return err
	}
	fmt.Fprintf(out, "\n== weighing the Galaxy from run %d (starvet weigh; inference %d)\n", run.RunID, r.InferenceID)
	fmt.Fprintf(out, "the simulated Galaxy's halo: %.2f times the campaign model's, M200 %.3g Msun (%.3g Msun for the halo on the concentration-mass relation with the same escape speed, what the tail estimates), escape speed at the Sun %.0f km/s (to infinity)\n",
		truth.HaloScale, truth.M200Msun, truth.M200RelationMsun, truth.VEscSunInfKms)
	line := func(name string, e inference.Estimate, truth float64, f string) {
		in := "outside"
		if e.Lo90 <= truth && truth <= e.Hi90 {
			in = "inside"
		}
		fmt.Fprintf(out, "  %-30s "+f+"  90%% ["+f+", "+f+"]  from %d stars; truth "+f+" is %s\n", name, e.Median, e.Lo90, e.Hi90, e.Stars, truth, in)
	}
	line("escape speed at the Sun, km/s", r.EscapeSpeedKms, truth.VEscSunInfKms, "%.0f")
	line("halo M200 (velocity tail)", r.HaloMassTailMsun, truth.M200RelationMsun, "%.3g")
	line("halo M200 (ejectee orbits)", r.HaloMassOrbitsMsun, truth.M200Msun, "%.3g")
	for _, n := range r.Notes {
		fmt.Fprintf(out, "  note: %s\n", n)
	}
	return nil
}

type demoOptions struct {
	dir       string
	stars     int
	seed      uint64
	workers   int
	haloScale float64
}

func parseDemoFlags(env *Env, args []string) (demoOptions, error) {
	fs := newFlags(env, "demo", "[options] [DIR]",
		"Write an invented survey campaign (fictional catalogs with injected hypervelocity stars,\n"+
			"runaways and artefacts, plus its ground truth) into DIR (default ./starvet-demo), vet it\n"+
			"into a ledger, write the report, simulate a catalog update, re-vet incrementally, and\n"+
			"print the recovery figures against the truth.")
	stars := fs.Int("stars", scenario.DefaultStars, "primary stars in the invented catalog")
	seed := fs.Uint64("seed", 7, "seed of the invented scenario")
	workers := fs.Int("workers", 0, "worker goroutines (0: one per core)")
	haloScale := fs.Float64("halo-scale", 1, "mass of the simulated Galaxy's dark halo, in units of the campaign model's (the campaign still vets in the model)")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return demoOptions{}, err
	}
	if len(pos) > 1 {
		return demoOptions{}, usageError("demo wants at most one directory, got %d arguments", len(pos))
	}
	o := demoOptions{dir: "starvet-demo", stars: *stars, seed: *seed, workers: *workers, haloScale: *haloScale}
	if len(pos) == 1 {
		o.dir = pos[0]
	}
	return o, nil
}

// freshDemoDir makes dir and removes any ledger in it: the demo's first
// run is a full run.
func freshDemoDir(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	for _, suffix := range []string{"", "-wal", "-shm", ".lock"} {
		_ = os.Remove(filepath.Join(dir, "starvet.db"+suffix))
	}
	return nil
}

// vetBothReleases vets the first release, applies the catalog update and
// vets the second release incrementally.
func vetBothReleases(ctx context.Context, env *Env, o demoOptions, sc *scenario.Scenario) (first, second *vetting.Summary, err error) {
	out := env.Stdout
	e := &vetting.Engine{Log: env.Log, Progress: newProgress(env), Workers: o.workers, ToolVersion: toolVersion}
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
	if first, err = run("release 1"); err != nil {
		return nil, nil, err
	}
	if err := scenario.Update(sc, o.dir, o.seed+1); err != nil {
		return nil, nil, err
	}
	fmt.Fprintf(out, "\n== catalog update: release %d revises the astrometry or adds spectra for %d stars\n", sc.Release, len(sc.Changed))
	if second, err = run(fmt.Sprintf("release %d, incremental", sc.Release)); err != nil {
		return nil, nil, err
	}
	return first, second, nil
}

// scoreAgainstTruth reads the verdicts of the second run back from the
// ledger and scores them against the injected truth.
func scoreAgainstTruth(ctx context.Context, second *vetting.Summary, truth []scenario.TruthRow) (scenario.Figures, error) {
	l, err := db.Open(ctx, second.LedgerPath, db.Options{ReadOnly: true})
	if err != nil {
		return scenario.Figures{}, err
	}
	defer l.Close()
	verdicts := map[string]scenario.Verdict{}
	if err := l.List(ctx, db.ListFilter{Run: second.RunID}, func(v db.VerdictRow) error {
		verdicts[v.StarID] = scenario.Verdict{Status: verdict.Status(v.Status), Origin: orbit.Origin(v.Origin)}
		return nil
	}); err != nil {
		return scenario.Figures{}, err
	}
	return scenario.Score(truth, verdicts), nil
}

func printDemoPlaces(out io.Writer, sc *scenario.Scenario, first, second *vetting.Summary, reportDir string) {
	fmt.Fprintf(out, "\n== where everything is\n")
	fmt.Fprintf(out, "  campaign   %s\n  truth      %s\n  ledger     %s (runs %d and %d)\n  report     %s\n",
		sc.CampaignPath, sc.TruthPath, second.LedgerPath, first.RunID, second.RunID, filepath.Join(reportDir, "index.html"))
	fmt.Fprintf(out, "  try        starvet why --ledger %s <star id>; starvet diff --ledger %s\n", second.LedgerPath, second.LedgerPath)
}

func printRecovery(out io.Writer, second *vetting.Summary, fig scenario.Figures) {
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
}

func printTargets(out io.Writer, fig scenario.Figures) {
	if fig.MeetsTargets() {
		fmt.Fprintf(out, "recovery targets met (completeness >= %.0f%%, contamination <= %.0f%%)\n", 100*scenario.TargetCompleteness, 100*scenario.TargetContamination)
	} else {
		fmt.Fprintf(out, "recovery targets MISSED for this seed (completeness >= %.0f%%, contamination <= %.0f%%); see the details above\n", 100*scenario.TargetCompleteness, 100*scenario.TargetContamination)
	}
}
