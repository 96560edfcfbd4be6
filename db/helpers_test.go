package db

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"fmt"
	"math"
	"path/filepath"
	"testing"
)

func tempLedger(t testing.TB) string {
	t.Helper()
	return filepath.Join(t.TempDir(), "ledger.db")
}

func openT(t testing.TB, path string, opt Options) *Ledger {
	t.Helper()
	l, err := Open(context.Background(), path, opt)
	if err != nil {
		t.Fatalf("open %s: %v", path, err)
	}
	t.Cleanup(func() { l.Close() })
	return l
}

// record builds a computed star whose values derive from i and salt, so a
// different salt changes its inputs.
func record(id string, i int, salt float64, status string) StarRecord {
	var in InputRow
	for j := range in.Values {
		in.Values[j] = float64(i)*0.001 + float64(j) + salt
	}
	in.Values[14] = math.NaN() // rv missing
	in.InputHash = fmt.Sprintf("h-%d-%g", i, salt)
	in.DupCount = 1
	return StarRecord{
		StarID:  id,
		Inputs:  &in,
		Matches: []MatchRow{{Catalog: "spec-alpha", CounterpartID: "s" + id, SepArcsec: 0.12, MatchProb: 0.97, Candidates: 1}},
		Verdict: VerdictRow{Status: status, Quality: "pass", DistanceMethod: "parallax", SpeedP16Kms: 400,
			SpeedP50Kms: 500 + float64(i%7), SpeedP84Kms: 600, SpeedLowerP50Kms: math.NaN(), RGCKpc: 9, VEscKms: 550,
			PUnbound: 0.3, PUnboundLower: math.NaN(), PGCOrigin: math.NaN(), GCConsistency: math.NaN(),
			FlightTimeMyr: math.NaN(), ModelName: "test-model"},
		Reasons: []ReasonRow{
			{RuleID: "parallax-snr", Outcome: "fail", Severity: "reject", Value: 3.5, Threshold: ">= 5", Message: "parallax over error too low"},
			{RuleID: "speed", Outcome: "info", Value: 500, Message: "median speed"},
		},
	}
}

// testSettings is what test runs record: BeginRun refuses a run without
// settings.
var testSettings = RunSettings{Values: []Setting{{"seed", "7"}, {"kinematics.unbound_p", "0.8"}, {"kinematics.marginal_p", "0.5"}}, RuleText: "# invented rules\n"}

// writeRun writes one complete run of the given records.
func writeRun(t testing.TB, l *Ledger, recs []StarRecord) int64 {
	t.Helper()
	ctx := context.Background()
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test", Seed: 7})
	if err != nil {
		t.Fatalf("begin run: %v", err)
	}
	if err := w.AddCatalog(ctx, CatalogRow{Name: "astro-main", Release: "r1", File: "a.csv", RowsRead: int64(len(recs)), RowsKept: int64(len(recs)), Epoch: 2019.5, Role: "astrometry"}); err != nil {
		t.Fatalf("add catalog: %v", err)
	}
	if err := w.AddStars(ctx, recs); err != nil {
		t.Fatalf("add stars: %v", err)
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		t.Fatalf("finish: %v", err)
	}
	return w.ID()
}

// runChecksum hashes every row a run owns, table by table, in a fixed
// order, together with the row counts.
func runChecksum(t testing.TB, l *Ledger, runID int64) string {
	t.Helper()
	h := sha256.New()
	for _, q := range []string{
		"SELECT * FROM runs WHERE id = ?",
		"SELECT * FROM catalogs WHERE run_id = ? ORDER BY name",
		"SELECT * FROM quarantine WHERE run_id = ? ORDER BY rowid",
		"SELECT * FROM inputs WHERE run_id = ? ORDER BY star_id",
		"SELECT * FROM matches WHERE run_id = ? ORDER BY star_id, catalog",
		"SELECT * FROM computed_verdicts WHERE computed_in_run = ? ORDER BY star_id",
		"SELECT * FROM verdicts WHERE run_id = ? ORDER BY star_id",
		"SELECT run_id, star_id, seq, rule_id, outcome, severity, value, threshold, message FROM reasons WHERE run_id = ? ORDER BY star_id, seq",
	} {
		n := hashRows(t, l.db, h, q, runID)
		fmt.Fprintf(h, "|%d rows|", n)
	}
	return hex.EncodeToString(h.Sum(nil))
}

func hashRows(t testing.TB, db *sql.DB, h interface{ Write([]byte) (int, error) }, q string, arg any) int {
	t.Helper()
	rows, err := db.Query(q, arg)
	if err != nil {
		t.Fatalf("%s: %v", q, err)
	}
	defer rows.Close()
	cols, _ := rows.Columns()
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	n := 0
	for rows.Next() {
		if err := rows.Scan(ptrs...); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
		for _, v := range vals {
			if b, ok := v.([]byte); ok {
				v = string(b)
			}
			fmt.Fprintf(h, "%T:%v;", v, v)
		}
		h.Write([]byte{'\n'})
		n++
	}
	if err := rows.Err(); err != nil {
		t.Fatalf("%s: %v", q, err)
	}
	return n
}

func countRows(t testing.TB, l *Ledger, table string, runID int64) int {
	t.Helper()
	var n int
	// table is one of our own constant names, never input.
	if err := l.db.QueryRow("SELECT count(*) FROM "+table+" WHERE run_id = ?", runID).Scan(&n); err != nil {
		t.Fatalf("count %s: %v", table, err)
	}
	return n
}

// countComputed counts the verdicts a run computed (not those it carries).
func countComputed(t testing.TB, l *Ledger, runID int64) int {
	t.Helper()
	var n int
	if err := l.db.QueryRow("SELECT count(*) FROM computed_verdicts WHERE computed_in_run = ?", runID).Scan(&n); err != nil {
		t.Fatalf("count computed verdicts: %v", err)
	}
	return n
}

// prevMap is a PrevSet as a map, and checks its ids are ascending.
func prevMap(t testing.TB, p *PrevSet) map[string]PrevStar {
	t.Helper()
	m := make(map[string]PrevStar, p.Len())
	for i, id := range p.IDs {
		if i > 0 && p.IDs[i-1] >= id {
			t.Fatalf("previous state ids out of order: %q then %q", p.IDs[i-1], id)
		}
		m[id] = p.Stars[i]
		if q, ok := p.Find(id); !ok || q != p.Stars[i] {
			t.Fatalf("Find(%q) = %+v, %v; want %+v", id, q, ok, p.Stars[i])
		}
	}
	return m
}
