package vetting

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/campaign"
	"starvet/db"
)

// A catalog in a format this build may or may not read (a garbage or
// absent .parquet file) stops the run at ingest with an error naming the
// file: no verdicts, no complete run. The test holds with or without a
// Parquet reader.
func TestRunStopsAtAnUnreadableCatalog(t *testing.T) {
	sc := smallScenario(t, 1000, 11)
	if sum := runCampaign(t, sc.CampaignPath, filepath.Join(t.TempDir(), "control.db"), false); sum.Computed == 0 {
		t.Fatal("the unmodified campaign computed no star")
	}
	text, err := os.ReadFile(sc.CampaignPath)
	if err != nil {
		t.Fatal(err)
	}
	spec := filepath.Base(sc.SpectroscopyPath)
	if !strings.Contains(string(text), `"`+spec+`"`) {
		t.Fatalf("campaign does not name %s", spec)
	}
	for _, c := range []struct {
		name string
		data []byte // nil: no file
	}{
		{"garbage", []byte("id,ra,dec\nthis is delimited text, not a columnar file\n")},
		{"absent", nil},
	} {
		t.Run(c.name, func(t *testing.T) {
			dir := filepath.Dir(sc.CampaignPath)
			pq := filepath.Join(dir, c.name+".parquet")
			if c.data != nil {
				if err := os.WriteFile(pq, c.data, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			cp := filepath.Join(dir, c.name+".toml")
			if err := os.WriteFile(cp, []byte(strings.Replace(string(text), `"`+spec+`"`, `"`+c.name+`.parquet"`, 1)), 0o644); err != nil {
				t.Fatal(err)
			}
			camp, err := campaign.Load(cp)
			if err != nil {
				t.Fatal(err)
			}
			cats, err := (&Engine{}).Ingest(context.Background(), camp, false, "")
			if err == nil || cats != nil || !strings.Contains(err.Error(), pq) {
				t.Errorf("Ingest: %v, catalogs %v; want an error naming %s and no catalogs", err, cats != nil, pq)
			}
			ledger := filepath.Join(t.TempDir(), "ledger.db")
			sum, err := (&Engine{}).Run(context.Background(), camp, RunOptions{LedgerPath: ledger})
			if err == nil || !strings.Contains(err.Error(), pq) {
				t.Fatalf("Run: %v (summary %v); want an error naming %s", err, sum, pq)
			}
			t.Logf("run stopped: %v", err)
			l, err := db.Open(context.Background(), ledger, db.Options{ReadOnly: true})
			if err != nil {
				t.Fatal(err)
			}
			defer l.Close()
			if last, err := l.LastCompleteRun(context.Background()); err != nil || last != nil {
				t.Errorf("last complete run %v, %v; want none", last, err)
			}
			runs, err := l.Runs(context.Background())
			if err != nil || len(runs) != 1 || runs[0].State != "failed" {
				t.Errorf("runs %+v, %v; want the one run, failed", runs, err)
			}
			n := 0
			if err := l.List(context.Background(), db.ListFilter{Run: runs[0].ID}, func(db.VerdictRow) error { n++; return nil }); err != nil {
				t.Logf("listing the failed run: %v", err)
			}
			if n != 0 {
				t.Errorf("%d verdicts in the failed run, want none", n)
			}
		})
	}
}
