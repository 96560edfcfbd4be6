package db

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"fmt"
	"strings"
	"testing"
)

// oldLedger writes, with plain SQL into a schema-2 ledger (migrations 1
// and 2 only), what the pipeline of that time wrote: run 1 computes 300
// stars; run 2 computes 2 (one new) and copies the other 299 verdicts;
// run 3 copies all 301, recomputes one and fails. Every computed star has
// inputs, a match, two reasons in rowid order and, for some, crossings.
func oldLedger(t *testing.T) string {
	t.Helper()
	p := tempLedger(t)
	db, err := sql.Open("sqlite3", p)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, m := range loadMigrations()[:2] {
		if _, err := db.Exec(m.sql); err != nil {
			t.Fatalf("%s: %v", m.name, err)
		}
	}
	exec := func(q string, args ...any) {
		t.Helper()
		if _, err := db.Exec(q, args...); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	for run, state := range map[int]string{1: "complete", 2: "complete", 3: "failed"} {
		exec(`INSERT INTO runs (id, started_at, state, tool_version, seed, "full", counts_json) VALUES (?, '2026-01-0'||?||'T00:00:00Z', ?, 'old', 7, 0, '{}')`, run, run, state)
		exec(`INSERT INTO catalogs (run_id, name, release, rows_read) VALUES (?, 'astro-main', 'r'||?, 300)`, run, run)
	}
	compute := func(run int, id string, i int, status string) {
		exec(`INSERT INTO inputs (run_id, star_id, input_hash, ra, dec, parallax, dup_count) VALUES (?, ?, ?, ?, ?, ?, ?)`,
			run, id, fmt.Sprintf("h%d-%d", run, i), float64(i)*1.2, -float64(i)*0.1, 0.01*float64(i), i%3)
		exec(`INSERT INTO matches (run_id, star_id, catalog, source_id, sep_arcsec, match_prob, candidates, ambiguous) VALUES (?, ?, 'spec-alpha', 's'||?, 0.1, 0.9, 1, 0)`, run, id, id)
		exec(`INSERT INTO reasons (run_id, star_id, rule_id, outcome, value, threshold, message) VALUES (?, ?, 'snr', 'fail', ?, '>= 5', 'low')`, run, id, float64(i))
		exec(`INSERT INTO reasons (run_id, star_id, rule_id, outcome, message) VALUES (?, ?, 'speed', 'info', 'median')`, run, id)
		if i%50 == 0 {
			exec(`INSERT INTO crossings (run_id, star_id, x_kpc, y_kpc, t_myr) VALUES (?, ?, 1.5, -2, 30)`, run, id)
		}
		exec(`INSERT INTO verdicts (run_id, star_id, status, quality, computed_in_run, input_hash, has_rv, speed_p50_kms, model_name)
			VALUES (?, ?, ?, 'pass', ?, ?, 0, ?, 'm')`, run, id, status, run, fmt.Sprintf("h%d-%d", run, i), 300+float64(i))
		exec(`INSERT INTO stars (star_id, first_run, last_run) VALUES (?, ?, ?) ON CONFLICT (star_id) DO UPDATE SET last_run = excluded.last_run`, id, run, run)
	}
	carry := func(run, from int) {
		exec(`INSERT INTO verdicts SELECT ?, star_id, status, quality, computed_in_run, input_hash, distance_method, has_rv,
			speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms, p_unbound, p_unbound_lower,
			origin, p_gc_origin, gc_consistency, flight_time_myr, model_name
			FROM verdicts v WHERE run_id = ? AND NOT EXISTS (SELECT 1 FROM verdicts c WHERE c.run_id = ? AND c.star_id = v.star_id)`, run, from, run)
		exec(`UPDATE stars SET last_run = ? WHERE star_id IN (SELECT star_id FROM verdicts WHERE run_id = ?)`, run, run)
	}
	for i := range 300 {
		compute(1, fmt.Sprintf("m%04d", (i*37)%300), i, []string{"bound", "unbound", "rejected"}[i%3])
	}
	compute(2, "m0007", 7, "marginal")
	compute(2, "new-1", 301, "bound")
	carry(2, 1)
	compute(3, "m0100", 100, "rejected")
	carry(3, 2)
	// What Finish stored: the counts of each run's verdicts.
	exec(`UPDATE runs SET counts_json = (SELECT json_group_object(status, n) FROM
		(SELECT status, count(*) AS n FROM verdicts WHERE run_id = runs.id GROUP BY status ORDER BY status))`)
	exec("PRAGMA user_version = 2")
	return p
}

// verdictColsSchema9 are the verdicts view's columns up to schema 9; schema
// 10 added columns after them.
const verdictColsSchema9 = "run_id, star_id, status, quality, computed_in_run, input_hash, distance_method, has_rv, " +
	"speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms, " +
	"p_unbound, p_unbound_lower, origin, p_gc_origin, gc_consistency, flight_time_myr, model_name"

// stableSum hashes a run with queries that read the same in schemas 5 and
// 6: its verdict set (columns named), inputs, matches and reasons.
func stableSum(t *testing.T, db *sql.DB, run int64) string {
	t.Helper()
	h := sha256.New()
	for _, q := range []string{
		"SELECT " + verdictColsSchema9 + " FROM verdicts WHERE run_id = ? ORDER BY star_id",
		"SELECT * FROM inputs WHERE run_id = ? ORDER BY star_id",
		"SELECT * FROM matches WHERE run_id = ? ORDER BY star_id, catalog",
		"SELECT run_id, star_id, seq, rule_id, outcome, severity, value, threshold, message FROM reasons WHERE run_id = ? ORDER BY star_id, seq",
		"SELECT run_id, star_id, x_kpc, y_kpc, t_myr FROM crossings WHERE run_id = ? ORDER BY star_id, rowid",
	} {
		fmt.Fprintf(h, "|%d rows|", hashRows(t, db, h, q, run))
	}
	return hex.EncodeToString(h.Sum(nil))
}

// A schema-2 ledger is rebuilt in place by migrations 3 to 6: complete runs
// read the same through the verdicts view as from the old table, every
// computed row is kept, a failed run keeps only its own computations, the
// tables have the new layout, and the ledger takes a further run.
func TestMigrateFromSchema2(t *testing.T) {
	ctx := context.Background()
	old := oldLedger(t)

	// Bring it to schema 5 by hand and take the reference hashes there.
	sdb, err := sql.Open("sqlite3", old)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range loadMigrations()[2:5] {
		if _, err := sdb.Exec(m.sql); err != nil {
			t.Fatalf("%s: %v", m.name, err)
		}
	}
	if _, err := sdb.Exec("PRAGMA user_version = 5"); err != nil {
		t.Fatal(err)
	}
	want := map[int64]string{1: stableSum(t, sdb, 1), 2: stableSum(t, sdb, 2)}
	var stars5 int
	if err := sdb.QueryRow("SELECT count(*) FROM stars").Scan(&stars5); err != nil || stars5 != 301 {
		t.Fatalf("schema-5 stars: %d, %v", stars5, err)
	}
	sdb.Close()

	l := openT(t, old, Options{})
	var v, pageSize int
	if err := l.db.QueryRow("PRAGMA user_version").Scan(&v); err != nil || v != SchemaVersion() {
		t.Fatalf("user_version %d, %v", v, err)
	}
	if err := l.db.QueryRow("PRAGMA page_size").Scan(&pageSize); err != nil || pageSize != 4096 {
		t.Errorf("an existing ledger keeps its page size: %d, %v (want SQLite's default 4096)", pageSize, err)
	}
	for run, sum := range want {
		if got := stableSum(t, l.db, run); got != sum {
			t.Errorf("run %d reads differently after the migration", run)
		}
	}
	if got := listText(t, l, 3); got != "m0100:rejected@3" {
		t.Errorf("failed run 3 after the migration: %s, want its own computation only", got)
	}
	var computed int
	if err := l.db.QueryRow("SELECT count(*) FROM computed_verdicts").Scan(&computed); err != nil || computed != 303 {
		t.Errorf("computed_verdicts holds %d rows, %v; want 300 + 2 + 1", computed, err)
	}
	var first, last int64
	if err := l.db.QueryRow("SELECT first_run, last_run FROM stars WHERE star_id = 'new-1'").Scan(&first, &last); err != nil || first != 2 || last != 2 {
		t.Errorf("stars new-1: first %d last %d, %v; want 2 2", first, last, err)
	}
	for _, tc := range []struct{ name, want string }{
		{"inputs", "CREATE VIEW inputs"},
		{"computed_verdicts", "PRIMARY KEY (star_id, computed_in_run)"},
		{"computed_verdicts_by_run", "ON computed_verdicts (computed_in_run, status)"},
		{"verdicts", "CREATE VIEW verdicts"},
		{"stars", "CREATE VIEW stars"},
		{"star_reasons", "PRIMARY KEY (run_id, star_id, seq)"},
		{"reason_forms", "PRIMARY KEY (run_id, form_id)"},
		{"reasons", "CREATE VIEW reasons"},
		{"matches", "PRIMARY KEY (run_id, star_id, catalog)"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var ddl string
			if err := l.db.QueryRow("SELECT sql FROM sqlite_schema WHERE name = ?", tc.name).Scan(&ddl); err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(ddl, tc.want) {
				t.Errorf("%s: %q lacks %q", tc.name, ddl, tc.want)
			}
		})
	}
	for _, q := range []string{"PRAGMA integrity_check", "PRAGMA foreign_key_check"} {
		rows, err := l.db.Query(q)
		if err != nil {
			t.Fatal(err)
		}
		var out []string
		for rows.Next() {
			var s sql.NullString
			cols, _ := rows.Columns()
			dest := make([]any, len(cols))
			dest[0] = &s
			for i := 1; i < len(dest); i++ {
				dest[i] = new(any)
			}
			if err := rows.Scan(dest...); err != nil {
				t.Fatal(err)
			}
			out = append(out, s.String)
		}
		rows.Close()
		if q == "PRAGMA integrity_check" && strings.Join(out, ",") != "ok" || q == "PRAGMA foreign_key_check" && len(out) != 0 {
			t.Errorf("%s after migration: %v", q, out)
		}
	}
	ps, err := l.PreviousState(ctx, 2)
	if err != nil {
		t.Fatal(err)
	}
	if prev := prevMap(t, ps); len(prev) != 301 || prev["m0007"].Status != "marginal" || prev["m0008"].ComputedInRun != 1 {
		t.Errorf("previous state after migration: %d stars, m0007 %+v, m0008 %+v, %v", len(prev), prev["m0007"], prev["m0008"], err)
	}
	// The migrated ledger takes a further incremental run.
	w4, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test", Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	if err := w4.AddStars(ctx, []StarRecord{record("m0001", 1, 2, "bound")}); err != nil {
		t.Fatal(err)
	}
	if err := w4.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	r4, err := l.Run(ctx, w4.ID())
	if err != nil || r4.StarsTotal != 301 || r4.StarsComputed != 1 || r4.StarsCarried != 300 {
		t.Errorf("run after migration: %+v, %v", r4, err)
	}
	if got := stableSum(t, l.db, 2); got != want[2] {
		t.Error("run 2 changed after a further run")
	}
}

// A schema-6 ledger with rows upgrades in place to the column names of
// migration 7: matches.source_id becomes counterpart_id and
// inputs.visibility_periods becomes fit_visits, every value kept, and the
// audit reads see them under the new names.
func TestMigrateFromSchema6Names(t *testing.T) {
	ctx := context.Background()
	p := tempLedger(t)
	sdb, err := sql.Open("sqlite3", p)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range loadMigrations()[:6] {
		if _, err := sdb.Exec(m.sql); err != nil {
			t.Fatalf("%s: %v", m.name, err)
		}
	}
	for _, q := range []string{
		`INSERT INTO runs (id, started_at, finished_at, state, tool_version, seed, "full", stars_total, stars_computed, stars_carried, counts_json)
			VALUES (1, '2026-01-01T00:00:00Z', '2026-01-01T00:01:00Z', 'complete', 'old', 7, 1, 2, 2, 0, '{"bound":1,"rejected":1}')`,
		`INSERT INTO computed_verdicts (star_id, computed_in_run, status, quality, input_hash, has_rv) VALUES ('a-1', 1, 'bound', 'pass', 'h1', 1)`,
		`INSERT INTO computed_verdicts (star_id, computed_in_run, status, quality, input_hash, has_rv) VALUES ('a-2', 1, 'rejected', 'reject', 'h2', 0)`,
		`INSERT INTO inputs (run_id, star_id, input_hash, ra, dec, visibility_periods) VALUES (1, 'a-1', 'h1', 10.5, -3.25, 14)`,
		`INSERT INTO inputs (run_id, star_id, input_hash, ra, dec, visibility_periods) VALUES (1, 'a-2', 'h2', 11.5, -4.25, 6)`,
		`INSERT INTO matches (run_id, star_id, catalog, source_id, sep_arcsec, match_prob, candidates, ambiguous) VALUES (1, 'a-1', 'spec-alpha', 'sp-0042', 0.12, 0.97, 1, 0)`,
		"PRAGMA user_version = 6",
	} {
		if _, err := sdb.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	sdb.Close()

	l := openT(t, p, Options{})
	var v int
	if err := l.db.QueryRow("PRAGMA user_version").Scan(&v); err != nil || v != SchemaVersion() || v < 7 {
		t.Fatalf("user_version %d, %v", v, err)
	}
	var visits []float64
	rows, err := l.db.Query("SELECT fit_visits FROM inputs WHERE run_id = 1 ORDER BY star_id")
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var f float64
		if err := rows.Scan(&f); err != nil {
			t.Fatal(err)
		}
		visits = append(visits, f)
	}
	rows.Close()
	if fmt.Sprint(visits) != "[14 6]" {
		t.Errorf("fit_visits after the upgrade: %v, want [14 6]", visits)
	}
	var all string
	if err := l.db.QueryRow("SELECT group_concat(sql, ';') FROM sqlite_schema WHERE sql IS NOT NULL").Scan(&all); err != nil {
		t.Fatal(err)
	}
	for _, gone := range []string{"source_id", "visibility_periods", "parallax_over_error"} {
		if strings.Contains(all, gone) {
			t.Errorf("the upgraded schema still says %s", gone)
		}
	}
	for _, tc := range []struct{ table, gone string }{{"matches", "source_id"}, {"inputs", "visibility_periods"}} {
		var ddl string
		if err := l.db.QueryRow("SELECT sql FROM sqlite_schema WHERE name = ?", tc.table).Scan(&ddl); err != nil {
			t.Fatal(err)
		}
		if strings.Contains(ddl, tc.gone) {
			t.Errorf("%s still has the column %s: %s", tc.table, tc.gone, ddl)
		}
	}
	ms, err := l.matchesOf(ctx, 1, "a-1")
	if err != nil {
		t.Fatal(err)
	}
	if len(ms) != 1 || ms[0].CounterpartID != "sp-0042" || ms[0].SepArcsec != 0.12 || ms[0].MatchProb != 0.97 {
		t.Errorf("matches after the upgrade: %+v", ms)
	}
	var ok string
	if err := l.db.QueryRow("PRAGMA integrity_check").Scan(&ok); err != nil || ok != "ok" {
		t.Errorf("integrity_check: %q, %v", ok, err)
	}
}

// A schema-8 ledger with a quarantined line upgrades to schema 9 with the
// line intact and no table row; a binary table's rejected row is then
// recorded by its row number.
func TestMigrateQuarantineRows(t *testing.T) {
	ctx := context.Background()
	p := tempLedger(t)
	sdb, err := sql.Open("sqlite3", p)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range loadMigrations()[:8] {
		if _, err := sdb.Exec(m.sql); err != nil {
			t.Fatalf("%s: %v", m.name, err)
		}
	}
	for _, q := range []string{
		`INSERT INTO runs (id, started_at, state, tool_version, seed, "full") VALUES (1, '2026-01-01T00:00:00Z', 'failed', 'old', 7, 1)`,
		`INSERT INTO quarantine (run_id, catalog, line, "column", column_name, value, reason) VALUES (1, 'lark', 12, 3, 'dec', '95', 'out of range')`,
		"PRAGMA user_version = 8",
	} {
		if _, err := sdb.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	sdb.Close()
	l := openT(t, p, Options{})
	var line int
	var row sql.NullInt64
	if err := l.db.QueryRow("SELECT line, table_row FROM quarantine WHERE run_id = 1").Scan(&line, &row); err != nil || line != 12 || row.Valid {
		t.Errorf("old quarantine row after the upgrade: line %d, table_row %v, %v", line, row, err)
	}
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddQuarantine(ctx, []QuarantineRow{{Catalog: "wren", Row: 17, Column: 2, ColumnName: "plx", Value: "-Inf", Reason: "not a number"}}); err != nil {
		t.Fatal(err)
	}
	if err := l.db.QueryRow("SELECT line, table_row FROM quarantine WHERE run_id = ?", w.ID()).Scan(&line, &row); err != nil || line != 0 || row.Int64 != 17 {
		t.Errorf("binary row: line %d, table_row %v, %v", line, row, err)
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
}
