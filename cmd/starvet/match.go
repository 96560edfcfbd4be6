package main

import (
	"context"
	"fmt"
	"path/filepath"

	"starvet/campaign"
	"starvet/catalog"
	"starvet/internal/numfmt"
	"starvet/vetting"
)

func runMatch(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "match", "CAMPAIGN.toml -o merged.csv",
		"Cross-match the campaign's catalogs: one output row per primary source with its best\n"+
			"counterpart in each other catalog (separation, posterior match probability, number of\n"+
			"candidates, ambiguity), its duplicate count, and its quality under the rule set.\n"+
			"Rejected input rows go to <catalog>.rejected.csv beside the output.")
	out := fs.String("o", "", "output file (required); its ending names the format: .csv, .ecsv, .fits, .vot (also .fit, .votable, .xml; .gz after csv, ecsv or fits compresses)")
	strict := fs.Bool("strict", false, "stop at the first bad input row instead of quarantining it")
	rulesPath := fs.String("rules", "", "rule-set file replacing the campaign's (\"default\" for the embedded set)")
	workers := fs.Int("workers", 0, "worker goroutines (0: one per core)")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError("match wants one campaign file, got %d arguments", len(pos))
	}
	if *out == "" {
		return usageError("match: -o merged.csv is required")
	}
	if _, err := catalog.OutFormat(*out); err != nil {
		return usageError("match: -o: %v", err)
	}
	c, err := campaign.Load(pos[0])
	if err != nil {
		return err
	}
	e := &vetting.Engine{Log: env.Log, Progress: newProgress(env), Workers: *workers, ToolVersion: toolVersion}
	rs, err := vetting.LoadRules(c, *rulesPath)
	if err != nil {
		return err
	}
	cats, err := e.Ingest(ctx, c, *strict, filepath.Dir(*out))
	if err != nil {
		return err
	}
	m, err := e.Match(ctx, c, cats)
	if err != nil {
		return err
	}
	as, err := e.AssessCatalogs(ctx, c, rs, cats, m)
	if err != nil {
		return err
	}
	if err := vetting.WriteMerged(*out, cats, m, as); err != nil {
		return err
	}
	w := env.Stderr
	for k, rep := range cats.Reports {
		fmt.Fprintf(w, "%-20s rows read %d = kept %d + quarantined %d\n", cats.Specs[k].Name, rep.RowsRead, rep.RowsKept, len(rep.Quarantined))
	}
	for k, t := range cats.Secondaries {
		st := m.Results[k].Stats
		fmt.Fprintf(w, "%-20s matched %d of %d primary sources (%d ambiguous), prior %s\n", t.Name, st.Matched, cats.Primary.Len(), st.Ambiguous, numfmt.Prob(m.Results[k].Prior))
	}
	q := map[string]int{}
	for _, a := range as {
		q[a.Quality]++
	}
	fmt.Fprintf(w, "quality under rule set %s %s: pass %d, flag %d, reject %d\n", rs.Name, rs.Version, q["pass"], q["flag"], q["reject"])
	fmt.Fprintf(w, "wrote %s\n", *out)
	return nil
}
