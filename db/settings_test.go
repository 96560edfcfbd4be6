package db

import (
	"context"
	"database/sql"
	"errors"
	"reflect"
	"slices"
	"strings"
	"testing"
)

// Settings written at BeginRun read back exactly, per run, sorted by
// name; numbers keep every bit; config_hash is their fingerprint and
// does not depend on the order they were given in.
func TestRunSettingsRoundTrip(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	third := 1.0 / 3
	first := RunSettings{
		Values: []Setting{
			FloatSetting("galaxy.sun_distance_kpc", 8.122),
			FloatSetting("potential.escape_radius_kpc", 0),
			FloatSetting("kinematics.unbound_p", third),
			{Name: "potential.model", Value: "invented-potential"},
			{Name: "potential.component.1.kind", Value: "hernquist"},
			FloatSetting("potential.component.1.mass_msun", 3.4e10),
			{Name: "seed", Value: "42"},
		},
		RuleText: "# rules, with a comment\n[[rule]]\nid = \"snr\"\n",
	}
	second := RunSettings{Values: []Setting{FloatSetting("potential.escape_radius_kpc", 200)}, RuleText: ""}
	var ids []int64
	for _, s := range []RunSettings{first, second} {
		w, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test", Settings: s})
		if err != nil {
			t.Fatal(err)
		}
		if err := w.Finish(ctx, RunSummary{}); err != nil {
			t.Fatal(err)
		}
		ids = append(ids, w.ID())
	}

	got, err := l.RunSettings(ctx, ids[0])
	if err != nil {
		t.Fatal(err)
	}
	want := slices.Clone(first.Values)
	slices.SortFunc(want, func(a, b Setting) int { return strings.Compare(a.Name, b.Name) })
	if !reflect.DeepEqual(got.Values, want) || got.RuleText != first.RuleText {
		t.Errorf("run %d settings read back as %+v, want %+v", ids[0], got, want)
	}
	if x, ok := got.Float("kinematics.unbound_p"); !ok || x != third {
		t.Errorf("unbound_p read back as %v (%v), want exactly 1/3", x, ok)
	}
	if x, ok := got.Float("galaxy.sun_distance_kpc"); !ok || x != 8.122 {
		t.Errorf("sun distance %v (%v), want 8.122", x, ok)
	}
	if _, ok := got.Float("kinematics.gc_radius_kpc"); ok {
		t.Error("a setting the run did not record reads as recorded")
	}
	got2, err := l.RunSettings(ctx, ids[1])
	if err != nil {
		t.Fatal(err)
	}
	if x, ok := got2.Float("potential.escape_radius_kpc"); !ok || x != 200 || len(got2.Values) != 1 || got2.RuleText != "" {
		t.Errorf("run %d settings: %+v", ids[1], got2)
	}

	r, err := l.Run(ctx, ids[0])
	if err != nil {
		t.Fatal(err)
	}
	if r.ConfigHash != first.ConfigHash() || r.ConfigHash != got.ConfigHash() || len(r.ConfigHash) != 64 {
		t.Errorf("config_hash %q, want the settings' fingerprint %q", r.ConfigHash, first.ConfigHash())
	}
	changed := RunSettings{Values: slices.Clone(first.Values), RuleText: first.RuleText + "# another comment\n"}
	if changed.ConfigHash() == first.ConfigHash() {
		t.Error("config_hash ignores the rule text")
	}
	changed = RunSettings{Values: append(slices.Clone(first.Values[1:]), FloatSetting("galaxy.sun_distance_kpc", 8.3)), RuleText: first.RuleText}
	if changed.ConfigHash() == first.ConfigHash() {
		t.Error("config_hash ignores a changed value")
	}
	if _, err := l.RunSettings(ctx, 99); !errors.Is(err, ErrNoRun) {
		t.Errorf("settings of an unknown run: %v, want ErrNoRun", err)
	}
}

// BeginRun refuses settings it could not record exactly, and then no run
// row exists: a run without settings cannot exist.
func TestBeginRunRefusesBadSettings(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	for name, s := range map[string]RunSettings{
		"none":         {RuleText: "x"},
		"twice":        {Values: []Setting{{"seed", "1"}, {"seed", "2"}}},
		"bad name":     {Values: []Setting{{"Sun Distance", "8"}}},
		"line break":   {Values: []Setting{{"rules.file", "a\nb"}}},
		"empty name":   {Values: []Setting{{"", "8"}}},
		"equals, name": {Values: []Setting{{"a=b", "8"}}},
	} {
		if _, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test", Settings: s}); !errors.Is(err, ErrSettings) {
			t.Errorf("%s: BeginRun: %v, want ErrSettings", name, err)
		}
	}
	var n int
	if err := l.db.QueryRow("SELECT count(*) FROM runs").Scan(&n); err != nil || n != 0 {
		t.Errorf("runs after refused settings: %d, %v; want none", n, err)
	}
	// The lock was released: a good run can begin.
	w, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test", Settings: testSettings})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
}

// A schema-7 ledger with rows upgrades in place: its runs keep every
// column and verdict, record no settings (Recorded false, config_hash as
// it was), and the next run records its own.
func TestMigrateFromSchema7Settings(t *testing.T) {
	ctx := context.Background()
	p := tempLedger(t)
	sdb, err := sql.Open("sqlite3", p)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range loadMigrations()[:7] {
		if _, err := sdb.Exec(m.sql); err != nil {
			t.Fatalf("%s: %v", m.name, err)
		}
	}
	for _, q := range []string{
		`INSERT INTO runs (id, started_at, finished_at, state, tool_version, campaign_hash, ruleset_hash, config_hash, match_hash, model_hash,
			seed, "full", stars_total, stars_computed, stars_carried, counts_json)
			VALUES (1, '2026-01-01T00:00:00Z', '2026-01-01T00:01:00Z', 'complete', 'old', 'camp', 'rules', 'camp', 'match', 'model',
			7, 0, 2, 2, 0, '{"bound":1,"unbound":1}')`,
		`INSERT INTO computed_verdicts (star_id, computed_in_run, status, quality, input_hash, has_rv, p_unbound, model_name)
			VALUES ('a-1', 1, 'bound', 'pass', 'h1', 1, 0.1, 'm')`,
		`INSERT INTO computed_verdicts (star_id, computed_in_run, status, quality, input_hash, has_rv, p_unbound, model_name)
			VALUES ('a-2', 1, 'unbound', 'pass', 'h2', 1, 0.9, 'm')`,
		`INSERT INTO reasons (run_id, star_id, seq, rule_id, outcome, value, threshold, message)
			VALUES (1, 'a-2', 0, 'kinematics.p-unbound', 'info', 0.9, '>= 0.8', 'fast')`,
		"PRAGMA user_version = 7",
	} {
		if _, err := sdb.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	sdb.Close()

	l := openT(t, p, Options{})
	var v int
	if err := l.db.QueryRow("PRAGMA user_version").Scan(&v); err != nil || v != SchemaVersion() || v < 8 {
		t.Fatalf("user_version %d, %v", v, err)
	}
	r1, err := l.Run(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	if r1.State != "complete" || r1.ConfigHash != "camp" || r1.CampaignHash != "camp" || r1.ModelHash != "model" ||
		r1.StarsTotal != 2 || r1.Counts["unbound"] != 1 || r1.Seed != 7 {
		t.Errorf("run 1 after the upgrade: %+v", r1)
	}
	s1, err := l.RunSettings(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	if s1.Recorded() || s1.RuleText != "" {
		t.Errorf("run 1 from schema 7 reads as having recorded settings: %+v", s1)
	}
	if got := listText(t, l, 1); got != "a-1:bound@1 a-2:unbound@1" {
		t.Errorf("run 1 verdicts after the upgrade: %s", got)
	}
	rs, err := l.Reasons(ctx, 1, "a-2")
	if err != nil || len(rs) != 1 || rs[0].Threshold != ">= 0.8" {
		t.Errorf("run 1 reasons after the upgrade: %+v, %v", rs, err)
	}

	w, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test", Settings: testSettings})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, []StarRecord{record("a-3", 3, 0, "bound")}); err != nil {
		t.Fatal(err)
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	s2, err := l.RunSettings(ctx, w.ID())
	if err != nil {
		t.Fatal(err)
	}
	if x, ok := s2.Float("kinematics.unbound_p"); !s2.Recorded() || !ok || x != 0.8 || s2.RuleText != testSettings.RuleText {
		t.Errorf("run after the upgrade records %+v", s2)
	}
	var ok string
	if err := l.db.QueryRow("PRAGMA integrity_check").Scan(&ok); err != nil || ok != "ok" {
		t.Errorf("integrity_check: %q, %v", ok, err)
	}
}
