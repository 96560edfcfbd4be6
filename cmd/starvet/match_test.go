package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/scenario"
)

// TestMatchCommand runs `starvet match CAMPAIGN -o OUT` (flags after the
// argument, as the usage line shows) on a small invented campaign.
func TestMatchCommand(t *testing.T) {
	dir := t.TempDir()
	sc, err := scenario.Generate(scenario.Config{Seed: 4, Stars: 1000, Samples: 50}, dir)
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "merged.csv")
	var stdout, stderr bytes.Buffer
	if err := Run(context.Background(), []string{"--quiet", "match", sc.CampaignPath, "-o", out}, &stdout, &stderr); err != nil {
		t.Fatalf("match: %v\n%s", err, stderr.String())
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	header := strings.Join(rows[0], ",")
	for _, col := range []string{"id", "vossbeck_id", "vossbeck_sep_arcsec", "vossbeck_match_prob", "vossbeck_candidates",
		"vossbeck_ambiguous", "tirrel_id", "dup_count", "quality", "failed_rules"} {
		if !strings.Contains(","+header+",", ","+col+",") {
			t.Errorf("header %q lacks %s", header, col)
		}
	}
	kept := len(sc.Truth)
	for _, b := range sc.BadRows {
		if b.File == filepath.Base(sc.AstrometryPath) {
			kept--
		}
	}
	if got := len(rows) - 1; got != kept {
		t.Errorf("%d output rows, want one per kept primary row (%d)", got, kept)
	}
	if !strings.Contains(stderr.String(), "rows read") || !strings.Contains(stderr.String(), "quarantined") {
		t.Errorf("summary on stderr lacks the row counts:\n%s", stderr.String())
	}
	for _, bad := range [][]string{{"match", sc.CampaignPath}, {"match", "-o", out}, {"match", sc.CampaignPath, sc.CampaignPath, "-o", out}} {
		if err := Run(context.Background(), bad, &stdout, &stderr); exitCode(err) != 2 {
			t.Errorf("%v: exit %d, want 2 (usage)", bad, exitCode(err))
		}
	}
}
