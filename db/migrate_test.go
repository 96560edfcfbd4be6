package db

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"strings"
	"testing"
)

// A ledger at schema 2 holding two runs (the second carries stars forward)
// is rebuilt by migration 3 in place: every row of every run hashes the same
// before and after, the rebuilt tables are WITHOUT ROWID, the status index
// is back, and the ledger takes a further run.
func TestMigrateFromSchema2(t *testing.T) {
	if SchemaVersion() < 3 {
		t.Skip("no migration 3")
	}
	ctx := context.Background()

	// The source: a current ledger written through the API.
	src := tempLedger(t)
	ls := openT(t, src, Options{})
	var recs []StarRecord
	for i := range 300 {
		r := record(fmt.Sprintf("m%04d", (i*37)%300), i, 0, []string{"bound", "unbound", "rejected"}[i%3])
		if i%5 == 0 {
			r.Verdict.Quality = ""
			r.Verdict.SpeedP50Kms = math.NaN()
		}
		recs = append(recs, r)
	}
	run1 := writeRun(t, ls, recs)
	w, err := ls.BeginRun(ctx, RunInfo{ToolVersion: "test", Seed: 8})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, []StarRecord{record("m0007", 7, 1, "marginal"), record("new-1", 301, 1, "bound")}); err != nil {
		t.Fatal(err)
	}
	if n, err := w.CarryForwardRest(ctx, run1); err != nil || n != 299 {
		t.Fatalf("carry forward: %d, %v", n, err)
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	run2 := w.ID()
	want := map[int64]string{run1: runChecksum(t, ls, run1), run2: runChecksum(t, ls, run2)}
	ls.Close()

	// The same rows in a ledger built by migrations 1 and 2 only.
	old := tempLedger(t)
	sdb, err := sql.Open("sqlite3", old)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range loadMigrations()[:2] {
		if _, err := sdb.Exec(m.sql); err != nil {
			t.Fatalf("%s: %v", m.name, err)
		}
	}
	if _, err := sdb.Exec("ATTACH DATABASE ? AS src", src); err != nil {
		t.Fatal(err)
	}
	for _, tab := range []string{"runs", "catalogs", "quarantine", "stars", "inputs", "matches", "verdicts", "crossings"} {
		// tab is one of the constant names above.
		if _, err := sdb.Exec("INSERT INTO main." + tab + " SELECT * FROM src." + tab); err != nil {
			t.Fatalf("copy %s: %v", tab, err)
		}
	}
	// Schema 2's reasons have no seq: their order is the rowid's.
	if _, err := sdb.Exec(`INSERT INTO main.reasons SELECT run_id, star_id, rule_id, outcome, severity, value, threshold, message
		FROM src.reasons ORDER BY run_id, star_id, seq`); err != nil {
		t.Fatalf("copy reasons: %v", err)
	}
	if _, err := sdb.Exec("DETACH DATABASE src"); err != nil {
		t.Fatal(err)
	}
	if _, err := sdb.Exec("PRAGMA user_version = 2"); err != nil {
		t.Fatal(err)
	}
	var ddl string
	if err := sdb.QueryRow("SELECT sql FROM sqlite_schema WHERE name = 'verdicts'").Scan(&ddl); err != nil || strings.Contains(ddl, "WITHOUT ROWID") {
		t.Fatalf("schema-2 verdicts should be a rowid table: %q, %v", ddl, err)
	}
	sdb.Close()

	l := openT(t, old, Options{})
	var pageSize int
	if err := l.db.QueryRow("PRAGMA page_size").Scan(&pageSize); err != nil || pageSize != 4096 {
		t.Errorf("an existing ledger keeps its page size: %d, %v (want SQLite's default 4096)", pageSize, err)
	}
	var v int
	if err := l.db.QueryRow("PRAGMA user_version").Scan(&v); err != nil || v != SchemaVersion() {
		t.Fatalf("user_version %d, %v", v, err)
	}
	for run, sum := range want {
		if got := runChecksum(t, l, run); got != sum {
			t.Errorf("run %d: rows changed by the migration (checksum %s, want %s)", run, got, sum)
		}
	}
	for _, tc := range []struct{ name, want string }{
		{"inputs", "WITHOUT ROWID"},
		{"verdicts", "WITHOUT ROWID"},
		{"verdicts_by_run_status", "ON verdicts (run_id, status)"},
		{"reasons", "PRIMARY KEY (run_id, star_id, seq)"},
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
	prev, err := l.PreviousState(ctx, run2)
	if err != nil || len(prev) != 301 || prev["m0007"].Status != "marginal" || prev["m0008"].ComputedInRun != run1 {
		t.Errorf("previous state after migration: %d stars, m0007 %+v, m0008 %+v, %v", len(prev), prev["m0007"], prev["m0008"], err)
	}
	// The migrated ledger takes a further incremental run.
	w3, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test", Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	if err := w3.AddStars(ctx, []StarRecord{record("m0001", 1, 2, "bound")}); err != nil {
		t.Fatal(err)
	}
	if n, err := w3.CarryForwardRest(ctx, run2); err != nil || n != 300 {
		t.Fatalf("carry forward after migration: %d, %v", n, err)
	}
	if err := w3.Finish(ctx, RunSummary{StarsTotal: 301, StarsComputed: 1, StarsCarried: 300}); err != nil {
		t.Fatal(err)
	}
}
