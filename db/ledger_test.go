package db

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"os"
	"strings"
	"testing"
	"time"
)

func TestOpenCreatesSchema(t *testing.T) {
	p := tempLedger(t)
	l := openT(t, p, Options{})
	var v int
	if err := l.db.QueryRow("PRAGMA user_version").Scan(&v); err != nil {
		t.Fatal(err)
	}
	if v != SchemaVersion() || v < 1 {
		t.Errorf("user_version = %d, want %d", v, SchemaVersion())
	}
	var mode string
	if err := l.db.QueryRow("PRAGMA journal_mode").Scan(&mode); err != nil {
		t.Fatal(err)
	}
	if mode != "wal" {
		t.Errorf("journal_mode = %q, want wal", mode)
	}
	var pageSize int
	if err := l.db.QueryRow("PRAGMA page_size").Scan(&pageSize); err != nil {
		t.Fatal(err)
	}
	if pageSize != newLedgerPageSize {
		t.Errorf("page_size = %d, want %d for a new ledger", pageSize, newLedgerPageSize)
	}
	var fk int
	if err := l.db.QueryRow("PRAGMA foreign_keys").Scan(&fk); err != nil {
		t.Fatal(err)
	}
	if fk != 1 {
		t.Errorf("foreign_keys = %d, want 1", fk)
	}
	// Reopening applies nothing twice.
	l.Close()
	l2 := openT(t, p, Options{})
	if ok, err := l2.IntegrityCheck(context.Background()); err != nil || ok != "ok" {
		t.Errorf("integrity_check = %q, %v", ok, err)
	}
}

func TestOpenRefuses(t *testing.T) {
	ctx := context.Background()
	tests := []struct {
		name    string
		prepare func(t *testing.T, path string)
		opt     Options
		want    error
		msg     []string
	}{
		{
			name: "newer schema",
			prepare: func(t *testing.T, path string) {
				l := openT(t, path, Options{})
				if _, err := l.db.Exec("PRAGMA user_version = 99"); err != nil {
					t.Fatal(err)
				}
				l.Close()
			},
			want: ErrNewerSchema,
			msg:  []string{"was written by a newer starvet", "schema 99", fmt.Sprintf("this build knows %d", SchemaVersion()), "refusing to use it"},
		},
		{
			name: "newer schema read-only",
			prepare: func(t *testing.T, path string) {
				l := openT(t, path, Options{})
				if _, err := l.db.Exec("PRAGMA user_version = 42"); err != nil {
					t.Fatal(err)
				}
				l.Close()
			},
			opt:  Options{ReadOnly: true},
			want: ErrNewerSchema,
			msg:  []string{"schema 42"},
		},
		{
			name: "foreign database",
			prepare: func(t *testing.T, path string) {
				sdb, err := sql.Open("sqlite3", path)
				if err != nil {
					t.Fatal(err)
				}
				defer sdb.Close()
				if _, err := sdb.Exec("CREATE TABLE planets (name TEXT)"); err != nil {
					t.Fatal(err)
				}
			},
			want: ErrNotLedger,
			msg:  []string{"schema version 0"},
		},
		{
			name:    "missing read-only",
			prepare: func(t *testing.T, path string) {},
			opt:     Options{ReadOnly: true},
			want:    os.ErrNotExist,
			msg:     []string{"open ledger"},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p := tempLedger(t)
			tc.prepare(t, p)
			l, err := Open(ctx, p, tc.opt)
			if err == nil {
				l.Close()
				t.Fatal("open succeeded, want refusal")
			}
			if !errors.Is(err, tc.want) {
				t.Errorf("error %v does not wrap %v", err, tc.want)
			}
			for _, m := range append(tc.msg, p) {
				if !strings.Contains(err.Error(), m) {
					t.Errorf("error %q lacks %q", err, m)
				}
			}
		})
	}
}

func TestRoundTripAndAudit(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	ids := []string{"A-1", "A-2", "A-3", "A-4"}
	var recs []StarRecord
	for i, id := range ids {
		recs = append(recs, record(id, i, 0, []string{"rejected", "accepted"}[i%2]))
	}
	r1 := writeRun(t, l, recs)

	// Run 2: A-1 recomputed with new inputs and now accepted, A-2 carried,
	// A-3 recomputed with same status, A-4 gone (withdrawn), A-5 new.
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test", Seed: 8})
	if err != nil {
		t.Fatal(err)
	}
	a1 := record("A-1", 0, 0.5, "accepted")
	a1.Inputs.Values[14] = 612.5 // rv now measured
	a1.Inputs.DupCount = 2
	a3 := record("A-3", 2, 0, "rejected")
	a5 := record("A-5", 5, 0, "accepted")
	withdrawn := StarRecord{StarID: "A-4", Verdict: NewVerdictRow("withdrawn")}
	if err := w.AddStars(ctx, []StarRecord{a1, a3, a5, withdrawn}); err != nil {
		t.Fatal(err)
	}
	// A-2 is not written: it keeps its run-1 verdict.
	if err := w.Finish(ctx, RunSummary{StarsTotal: 5, StarsComputed: 4, StarsCarried: 1,
		Counts: map[string]int64{"accepted": 3, "rejected": 1, "withdrawn": 1, "bound": 0}}); err != nil {
		t.Fatal(err)
	}
	r2 := w.ID()

	t.Run("runs", func(t *testing.T) {
		runs, err := l.Runs(ctx)
		if err != nil {
			t.Fatal(err)
		}
		if len(runs) != 2 || runs[1].ID != r2 || runs[1].State != "complete" {
			t.Fatalf("runs = %+v", runs)
		}
		got := runs[1]
		if got.StarsTotal != 5 || got.StarsComputed != 4 || got.StarsCarried != 1 || got.Seed != 8 {
			t.Errorf("run 2 summary = %+v", got)
		}
		want := map[string]int64{"accepted": 3, "rejected": 1, "withdrawn": 1}
		if fmt.Sprint(got.Counts) != fmt.Sprint(want) {
			t.Errorf("counts = %v, want %v", got.Counts, want)
		}
		last, err := l.LastCompleteRun(ctx)
		if err != nil || last == nil || last.ID != r2 {
			t.Errorf("last complete = %+v, %v", last, err)
		}
		if _, err := l.Run(ctx, 99); !errors.Is(err, ErrNoRun) {
			t.Errorf("run 99: %v, want ErrNoRun", err)
		}
	})

	t.Run("previous state", func(t *testing.T) {
		ps, err := l.PreviousState(ctx, r2)
		if err != nil {
			t.Fatal(err)
		}
		m := prevMap(t, ps)
		if len(m) != 5 {
			t.Fatalf("%d stars, want 5", len(m))
		}
		if p := m["A-2"]; p.ComputedInRun != r1 || p.Status != "accepted" || p.InputHash != "h-1-0" {
			t.Errorf("A-2 = %+v", p)
		}
		if p := m["A-1"]; p.ComputedInRun != r2 || p.InputHash != "h-0-0.5" {
			t.Errorf("A-1 = %+v", p)
		}
	})

	t.Run("why", func(t *testing.T) {
		h, err := l.Why(ctx, "A-1")
		if err != nil {
			t.Fatal(err)
		}
		if h.CurrentStatus != "accepted" || h.CurrentRun != r2 || h.FirstRun != r1 || h.LastRun != r2 {
			t.Errorf("history head = %+v", h)
		}
		if len(h.Runs) != 2 || h.Runs[0].Verdict.Status != "rejected" || h.Runs[1].Verdict.Status != "accepted" {
			t.Fatalf("runs = %+v", h.Runs)
		}
		if len(h.Computations) != 2 {
			t.Fatalf("%d computations, want 2", len(h.Computations))
		}
		c := h.Computations[1]
		// Every value moved by the salt 0.5 except rv, which went from
		// missing to 612.5.
		if len(c.Changes) != NumInputs {
			t.Errorf("%d changed fields, want %d: %+v", len(c.Changes), NumInputs, c.Changes)
		}
		var rv *FieldChange
		for i := range c.Changes {
			if c.Changes[i].Name == "rv" {
				rv = &c.Changes[i]
			}
		}
		if rv == nil || !math.IsNaN(rv.Old) || rv.New != 612.5 || rv.Unit != "km/s" {
			t.Errorf("rv change = %+v", rv)
		}
		if c.DupCountChange == nil || *c.DupCountChange != [2]int{1, 2} {
			t.Errorf("dup count change = %v", c.DupCountChange)
		}
		if len(c.Reasons) != 2 || c.Reasons[0].RuleID != "parallax-snr" || c.Reasons[0].Value != 3.5 || c.Reasons[0].Threshold != ">= 5" {
			t.Errorf("reasons = %+v", c.Reasons)
		}
		if !math.IsNaN(c.Reasons[1].Value) && c.Reasons[1].Value != 500 {
			t.Errorf("info reason value = %v", c.Reasons[1].Value)
		}
		if len(c.Matches) != 1 || c.Matches[0].CounterpartID != "sA-1" || c.Matches[0].SepArcsec != 0.12 {
			t.Errorf("matches = %+v", c.Matches)
		}
		if v := c.Verdict; v.SpeedP50Kms != 500 || !math.IsNaN(v.PUnboundLower) || v.ModelName != "test-model" {
			t.Errorf("verdict = %+v", v)
		}

		h4, err := l.Why(ctx, "A-4")
		if err != nil {
			t.Fatal(err)
		}
		if v := h4.Runs[1].Verdict; v.Status != "withdrawn" || !math.IsNaN(v.SpeedP50Kms) || !math.IsNaN(v.PUnbound) || h4.Computations[1].Inputs != nil {
			t.Errorf("withdrawn verdict %+v", v)
		}

		h2, err := l.Why(ctx, "A-2")
		if err != nil {
			t.Fatal(err)
		}
		if len(h2.Runs) != 2 || !h2.Runs[1].Verdict.Carried() || h2.Runs[1].Verdict.ComputedInRun != r1 {
			t.Errorf("A-2 runs = %+v", h2.Runs)
		}
		if len(h2.Computations) != 1 || h2.Computations[0].RunID != r1 || len(h2.Computations[0].Reasons) != 2 {
			t.Errorf("A-2 computations = %+v", h2.Computations)
		}

		if _, err := l.Why(ctx, "nope"); !errors.Is(err, ErrUnknownStar) || !strings.Contains(err.Error(), `"nope"`) {
			t.Errorf("unknown star: %v", err)
		}
	})

	t.Run("list", func(t *testing.T) {
		tests := []struct {
			f    ListFilter
			want []string
		}{
			{ListFilter{}, []string{"A-1", "A-2", "A-3", "A-4", "A-5"}},
			{ListFilter{Status: "accepted"}, []string{"A-1", "A-2", "A-5"}},
			{ListFilter{Status: "accepted", Limit: 2}, []string{"A-1", "A-2"}},
			{ListFilter{Run: r1, Status: "rejected"}, []string{"A-1", "A-3"}},
			{ListFilter{Status: "bound"}, nil},
		}
		for _, tc := range tests {
			t.Run(fmt.Sprintf("%+v", tc.f), func(t *testing.T) {
				var got []string
				err := l.List(ctx, tc.f, func(v VerdictRow) error { got = append(got, v.StarID); return nil })
				if err != nil {
					t.Fatal(err)
				}
				if fmt.Sprint(got) != fmt.Sprint(tc.want) {
					t.Errorf("got %v, want %v", got, tc.want)
				}
			})
		}
		if err := l.List(ctx, ListFilter{Run: 77}, func(VerdictRow) error { return nil }); !errors.Is(err, ErrNoRun) {
			t.Errorf("run 77: %v", err)
		}
	})

	t.Run("diff", func(t *testing.T) {
		d, err := l.Diff(ctx, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		if d.RunA != r1 || d.RunB != r2 {
			t.Errorf("runs %d %d", d.RunA, d.RunB)
		}
		wantT := "[{(none) accepted 1} {accepted withdrawn 1} {rejected accepted 1}]"
		if fmt.Sprint(d.Transitions) != wantT {
			t.Errorf("transitions %v, want %v", d.Transitions, wantT)
		}
		if d.Unchanged != 2 || d.Changed != 3 {
			t.Errorf("unchanged %d changed %d", d.Unchanged, d.Changed)
		}
		wantS := "[{A-1 rejected accepted} {A-4 accepted withdrawn} {A-5 (none) accepted}]"
		if fmt.Sprint(d.Stars) != wantS {
			t.Errorf("stars %v, want %v", d.Stars, wantS)
		}
		d2, err := l.DiffN(ctx, r2, r1, 1)
		if err != nil {
			t.Fatal(err)
		}
		if len(d2.Stars) != 1 || d2.Changed != 3 || fmt.Sprint(d2.Stars[0]) != "{A-1 accepted rejected}" {
			t.Errorf("reverse diff %+v", d2)
		}
		if _, err := l.Diff(ctx, r1, 9); !errors.Is(err, ErrNoRun) {
			t.Errorf("diff with run 9: %v", err)
		}
	})
}

func TestDiffNeedsTwoRuns(t *testing.T) {
	l := openT(t, tempLedger(t), Options{})
	writeRun(t, l, []StarRecord{record("x", 1, 0, "accepted")})
	_, err := l.Diff(context.Background(), 0, 0)
	if !errors.Is(err, ErrNoRuns) || !strings.Contains(err.Error(), "it has 1") {
		t.Errorf("diff: %v", err)
	}
}

// Identifiers that would break string-built SQL must survive every path.
func TestHostileIDs(t *testing.T) {
	ctx := context.Background()
	ids := []string{
		`it's "quoted"`,
		"semi;colon",
		"with space",
		"dash--dash",
		"'); DROP TABLE runs; --",
		"Ωμέγα-星-7",
		`back\slash%_`,
	}
	l := openT(t, tempLedger(t), Options{})
	var recs []StarRecord
	for i, id := range ids {
		recs = append(recs, record(id, i, 0, "rejected"))
	}
	r1 := writeRun(t, l, recs)
	recs = recs[:0]
	for i, id := range ids {
		recs = append(recs, record(id, i, 1, "accepted"))
	}
	writeRun(t, l, recs)
	for _, id := range ids {
		t.Run(id, func(t *testing.T) {
			h, err := l.Why(ctx, id)
			if err != nil {
				t.Fatal(err)
			}
			if h.StarID != id || len(h.Runs) != 2 || h.CurrentStatus != "accepted" || h.Computations[0].Matches[0].CounterpartID != "s"+id {
				t.Errorf("history %+v", h)
			}
			var got []string
			if err := l.List(ctx, ListFilter{Run: r1}, func(v VerdictRow) error { got = append(got, v.StarID); return nil }); err != nil {
				t.Fatal(err)
			}
			if !contains(got, id) {
				t.Errorf("list lacks %q: %q", id, got)
			}
		})
	}
	d, err := l.Diff(ctx, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, s := range d.Stars {
		got = append(got, s.StarID)
	}
	for _, id := range ids {
		if !contains(got, id) {
			t.Errorf("diff lacks %q", id)
		}
	}
	if runs, err := l.Runs(ctx); err != nil || len(runs) != 2 {
		t.Errorf("runs table after hostile ids: %d runs, %v", len(runs), err)
	}
}

func contains(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

func TestAppendOnly(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	var recs []StarRecord
	for i := range 50 {
		recs = append(recs, record(fmt.Sprintf("S%03d", i), i, 0, "accepted"))
	}
	r1 := writeRun(t, l, recs)
	before := runChecksum(t, l, r1)
	for i := range recs {
		recs[i] = record(recs[i].StarID, i, 2, "rejected")
	}
	// A run that fails half-way and one that completes.
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, recs[:10]); err != nil {
		t.Fatal(err)
	}
	if err := w.Fail(ctx, errors.New("boom")); err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, recs[10:]); !errors.Is(err, ErrRunDone) {
		t.Errorf("add after fail: %v", err)
	}
	writeRun(t, l, recs)
	if after := runChecksum(t, l, r1); after != before {
		t.Errorf("run 1 rows changed: %s -> %s", before, after)
	}
	if n := countRows(t, l, "verdicts", r1); n != 50 {
		t.Errorf("run 1 has %d verdicts", n)
	}
	r, _ := l.Run(ctx, w.ID())
	if r.State != "failed" || r.Note != "boom" || r.FinishedAt.IsZero() {
		t.Errorf("failed run = %+v", r)
	}
}

func TestBadRecords(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	r1 := writeRun(t, l, []StarRecord{record("ok", 1, 0, "accepted")})
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	defer w.Fail(ctx, errors.New("test over"))
	carried := record("c", 1, 0, "accepted")
	carried.Verdict.ComputedInRun = r1
	tests := []struct {
		name string
		rec  StarRecord
		want string
	}{
		{"empty id", StarRecord{Verdict: VerdictRow{Status: "accepted"}}, "empty star id"},
		{"empty status", StarRecord{StarID: "x"}, `star "x": empty status`},
		{"carried forward", carried, `star "c": written by run 2 but its verdict says computed in run 1`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			good := record("good-"+tc.name, 2, 0, "accepted")
			err := w.AddStars(ctx, []StarRecord{good, tc.rec})
			if !errors.Is(err, ErrBadRecord) || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want ErrBadRecord with %q", err, tc.want)
			}
			if n := countComputed(t, l, w.ID()); n != 0 {
				t.Errorf("%d verdicts written by a rejected batch", n)
			}
		})
	}
	if err := w.AddStars(ctx, []StarRecord{record("ok", 1, 1, "accepted")}); err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, []StarRecord{record("ok", 1, 2, "accepted")}); err == nil || !strings.Contains(err.Error(), "UNIQUE") {
		t.Errorf("a star written twice by one run: %v, want a primary-key error", err)
	}
	err = w.Finish(ctx, RunSummary{StarsTotal: 3})
	if !errors.Is(err, ErrSummary) || !strings.Contains(err.Error(), "stars_total is 3 but the ledger holds 1") {
		t.Errorf("finish with wrong total: %v", err)
	}
	err = w.Finish(ctx, RunSummary{StarsComputed: 2, Counts: map[string]int64{"accepted": 2}})
	if !errors.Is(err, ErrSummary) || !strings.Contains(err.Error(), "stars_computed is 2 but the ledger holds 1") {
		t.Errorf("finish with wrong computed count: %v", err)
	}
	err = w.Finish(ctx, RunSummary{Counts: map[string]int64{"accepted": 2}})
	if !errors.Is(err, ErrSummary) || !strings.Contains(err.Error(), "status counts") {
		t.Errorf("finish with wrong counts: %v", err)
	}
}

func TestTwoWriters(t *testing.T) {
	ctx := context.Background()
	p := tempLedger(t)
	l1 := openT(t, p, Options{})
	r1 := writeRun(t, l1, []StarRecord{record("a", 1, 0, "accepted")})
	sum1 := runChecksum(t, l1, r1)
	w1, err := l1.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "first"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w1.AddStars(ctx, []StarRecord{record("a", 1, 1, "rejected")}); err != nil {
		t.Fatal(err)
	}

	wait := 300 * time.Millisecond
	l2 := openT(t, p, Options{LockWait: wait}) // writable open must not repair the live run
	start := time.Now()
	_, err = l2.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "second"})
	elapsed := time.Since(start)
	if !errors.Is(err, ErrBusy) {
		t.Fatalf("second writer: %v, want ErrBusy", err)
	}
	for _, m := range []string{p, "is busy: another run is writing it", "waited 300ms"} {
		if !strings.Contains(err.Error(), m) {
			t.Errorf("error %q lacks %q", err, m)
		}
	}
	// The bound is the wait plus one poll; the upper limit is generous
	// because the machine is shared.
	if elapsed < wait || elapsed > wait+5*time.Second {
		t.Errorf("gave up after %v, want about %v", elapsed, wait)
	}

	t.Run("reader during write", func(t *testing.T) {
		ro := openT(t, p, Options{ReadOnly: true})
		runs, err := ro.Runs(ctx)
		if err != nil {
			t.Fatal(err)
		}
		if len(runs) != 2 || runs[1].State != "running" || runs[1].Interrupted {
			t.Errorf("runs seen by a reader: %+v", runs)
		}
		h, err := ro.Why(ctx, "a")
		if err != nil {
			t.Fatal(err)
		}
		if h.CurrentStatus != "accepted" || h.CurrentRun != r1 {
			t.Errorf("current status while writing = %q in run %d", h.CurrentStatus, h.CurrentRun)
		}
		n := 0
		if err := ro.List(ctx, ListFilter{}, func(VerdictRow) error { n++; return nil }); err != nil || n != 1 {
			t.Errorf("list while writing: %d rows, %v", n, err)
		}
	})

	if err := w1.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	w2, err := l2.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "second"})
	if err != nil {
		t.Fatalf("second writer after the first finished: %v", err)
	}
	if err := w2.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	runs, _ := l2.Runs(ctx)
	if len(runs) != 3 || runs[1].State != "complete" || runs[2].State != "complete" {
		t.Errorf("runs = %+v", runs)
	}
	if ok, err := l2.IntegrityCheck(ctx); ok != "ok" || err != nil {
		t.Errorf("integrity %q %v", ok, err)
	}
	if s := runChecksum(t, l2, r1); s != sum1 {
		t.Errorf("run 1 changed")
	}
}

// A run abandoned without Finish or Fail (its process gone, simulated by
// releasing the lock) reads as failed (interrupted) read-only, and is
// marked failed by the next writable open.
func TestStaleRun(t *testing.T) {
	ctx := context.Background()
	p := tempLedger(t)
	l := openT(t, p, Options{})
	writeRun(t, l, []StarRecord{record("a", 1, 0, "accepted")})
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	w.lock.release()
	l.Close()

	ro := openT(t, p, Options{ReadOnly: true})
	r, err := ro.Run(ctx, w.ID())
	if err != nil {
		t.Fatal(err)
	}
	if r.State != "failed" || !r.Interrupted || r.StateText() != "failed (interrupted)" {
		t.Errorf("read-only view of stale run: %+v", r)
	}
	ro.Close()

	l2 := openT(t, p, Options{})
	r, err = l2.Run(ctx, w.ID())
	if err != nil {
		t.Fatal(err)
	}
	if r.State != "failed" || r.Interrupted || !strings.Contains(r.Note, "interrupted") || r.FinishedAt.IsZero() {
		t.Errorf("after writable open: %+v", r)
	}
}

// The example queries in SCHEMA.md must run against a real ledger.
func TestSchemaExamples(t *testing.T) {
	b, err := os.ReadFile("SCHEMA.md")
	if err != nil {
		t.Fatal(err)
	}
	doc := string(b)
	i := strings.Index(doc, "```sql\n")
	j := strings.LastIndex(doc, "```")
	if i < 0 || j <= i {
		t.Fatal("no sql block in SCHEMA.md")
	}
	l := openT(t, tempLedger(t), Options{})
	writeRun(t, l, []StarRecord{record("HV-0001", 1, 0, "rejected")})
	writeRun(t, l, []StarRecord{record("HV-0001", 1, 1, "accepted")})
	want := []int{1, 2, 2, 2} // rows per query: one status, two runs, two thresholds, two reasons
	for k, q := range strings.Split(strings.TrimSpace(doc[i+len("```sql\n"):j]), ";") {
		q = strings.TrimSpace(q)
		if q == "" {
			continue
		}
		t.Run(fmt.Sprint(k), func(t *testing.T) {
			rows, err := l.db.Query(q)
			if err != nil {
				t.Fatalf("%s: %v", q, err)
			}
			defer rows.Close()
			n := 0
			for rows.Next() {
				n++
			}
			if n != want[k] {
				t.Errorf("%s: %d rows, want %d", q, n, want[k])
			}
		})
	}
}

// The README's queries for the everyday jobs run against a real ledger
// and each returns rows: two runs in which HV-0001 is recomputed and
// becomes unbound, HV-0002 is carried forward rejected.
func TestReadmeQueries(t *testing.T) {
	b, err := os.ReadFile("../README.md")
	if err != nil {
		t.Fatal(err)
	}
	doc := string(b)
	i := strings.Index(doc, "### SQL for the everyday jobs")
	if i < 0 {
		t.Fatal("README has no section SQL for the everyday jobs")
	}
	doc = doc[i:]
	i = strings.Index(doc, "```sql\n")
	j := strings.Index(doc[i+1:], "```") + i + 1
	if i < 0 || j <= i {
		t.Fatal("no sql block in the README section")
	}
	l := openT(t, tempLedger(t), Options{})
	a, c := record("HV-0001", 1, 0, "rejected"), record("PL-0001510", 2, 0, "rejected")
	writeRun(t, l, []StarRecord{a, c})
	a = record("HV-0001", 1, 1, "unbound")
	writeRun(t, l, []StarRecord{a})
	n := 0
	for _, q := range strings.Split(doc[i+len("```sql\n"):j], ";") {
		if strings.TrimSpace(stripComments(q)) == "" {
			continue
		}
		n++
		rows, err := l.db.Query(q)
		if err != nil {
			t.Fatalf("%s: %v", q, err)
		}
		got := 0
		for rows.Next() {
			got++
		}
		rows.Close()
		if got == 0 {
			t.Errorf("%s: no rows", q)
		}
	}
	if n < 5 {
		t.Errorf("%d queries, want at least 5", n)
	}
}

func stripComments(q string) string {
	var out []string
	for _, line := range strings.Split(q, "\n") {
		if !strings.HasPrefix(strings.TrimSpace(line), "--") {
			out = append(out, line)
		}
	}
	return strings.Join(out, "\n")
}

func TestCrossingsAndPositions(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	a := record("A", 1, 0, "accepted")
	a.Crossings = []CrossingRow{{XKpc: 0.5, YKpc: -0.25, TMyr: 30}, {XKpc: 1, YKpc: 2, TMyr: 31}}
	b := record("B", 2, 0, "rejected")
	b.Inputs.Values[0], b.Inputs.Values[1] = 123.25, math.NaN() // ra, dec
	r1 := writeRun(t, l, []StarRecord{a, b})
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, []StarRecord{record("B", 2, 1, "rejected")}); err != nil {
		t.Fatal(err)
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil { // A is carried
		t.Fatal(err)
	}
	var cs []string
	if err := l.Crossings(ctx, w.ID(), func(c CrossingRow) error {
		cs = append(cs, fmt.Sprint(c))
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	// A's crossings come from run 1, where it was computed.
	if fmt.Sprint(cs) != "[{A 0.5 -0.25 30} {A 1 2 31}]" {
		t.Errorf("crossings %v", cs)
	}
	var ps []string
	if err := l.Positions(ctx, r1, func(id string, ra, dec float64) error {
		ps = append(ps, fmt.Sprint(id, ra, dec))
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	// record() sets ra = i*0.001 + 0 + salt, dec = i*0.001 + 1 + salt.
	if fmt.Sprint(ps) != "[A0.001 1.001 B123.25 NaN]" {
		t.Errorf("positions %v", ps)
	}
}

// A ledger at schema 1 is upgraded in place by a writable open and its
// rows survive; a read-only open refuses it until then.
func TestMigrateFromSchema1(t *testing.T) {
	ctx := context.Background()
	p := tempLedger(t)
	sdb, err := sql.Open("sqlite3", p)
	if err != nil {
		t.Fatal(err)
	}
	m1 := loadMigrations()[0]
	if _, err := sdb.Exec(m1.sql); err != nil {
		t.Fatal(err)
	}
	if _, err := sdb.Exec("PRAGMA user_version = 1"); err != nil {
		t.Fatal(err)
	}
	if _, err := sdb.Exec(`INSERT INTO runs (id, started_at, state, tool_version, seed, "full") VALUES (1, '2026-01-01T00:00:00Z', 'complete', 'old', 3, 0)`); err != nil {
		t.Fatal(err)
	}
	sdb.Close()
	if SchemaVersion() < 2 {
		t.Skip("only one migration")
	}
	if _, err := Open(ctx, p, Options{ReadOnly: true}); !errors.Is(err, ErrNotLedger) || !strings.Contains(err.Error(), "has schema 1") {
		t.Errorf("read-only open of schema 1: %v", err)
	}
	l := openT(t, p, Options{})
	var v int
	if err := l.db.QueryRow("PRAGMA user_version").Scan(&v); err != nil || v != SchemaVersion() {
		t.Errorf("user_version %d, %v", v, err)
	}
	r, err := l.Run(ctx, 1)
	if err != nil || r.ToolVersion != "old" || r.Seed != 3 {
		t.Errorf("old run after upgrade: %+v, %v", r, err)
	}
	if err := l.Crossings(ctx, 1, func(CrossingRow) error { return nil }); err != nil {
		t.Errorf("crossings table after upgrade: %v", err)
	}
}

// Since schema 10 a run keeps a star's reasons as a JSON list in its
// verdict row; the reasons view gives them back exactly: every value bit
// for bit (NaN as NULL, infinities, subnormals, integral values), messages
// with any characters, a message shared by a form or a star's own, across
// batches that reuse the run's forms.
func TestReasonListRoundTrip(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	odd := "quote \" backslash \\ newline \n tab \t µas <b>&</b> \u2028 end"
	values := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 3, 1e-300, 5e-324, -2.5e-7, 0.1, math.MaxFloat64, 123456789.123456789}
	var recs [][]StarRecord
	for b := range 2 {
		var batch []StarRecord
		for i, v := range values {
			id := fmt.Sprintf("s%d-%02d", b, i)
			r := record(id, i, 0, "rejected")
			r.Reasons = []ReasonRow{
				{RuleID: "skip-rule", Outcome: "skipped", Severity: "flag", Value: math.NaN(), Threshold: "<= 2", Message: "skipped: x missing"},
				{RuleID: "fail-rule", Outcome: "fail", Severity: "reject", Value: v, Threshold: ">= 5", Message: fmt.Sprintf("value %v of %s", v, id)},
				{RuleID: "note", Outcome: "info", Value: math.NaN(), Message: odd},
				{RuleID: "note", Outcome: "info", Value: v},
			}
			batch = append(batch, r)
		}
		if err := w.AddStars(ctx, batch); err != nil {
			t.Fatal(err)
		}
		recs = append(recs, batch)
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	same := func(a, b float64) bool {
		return math.Float64bits(a) == math.Float64bits(b) || (math.IsNaN(a) && math.IsNaN(b))
	}
	for _, batch := range recs {
		for _, r := range batch {
			got, err := l.Reasons(ctx, w.ID(), r.StarID)
			if err != nil {
				t.Fatal(err)
			}
			viewed := reasonsView(t, l, w.ID(), r.StarID)
			if len(viewed) != len(r.Reasons) {
				t.Fatalf("%s: the reasons view gives %d reasons, want %d", r.StarID, len(viewed), len(r.Reasons))
			}
			for k, want := range r.Reasons {
				g := viewed[k]
				if g.RuleID != want.RuleID || g.Outcome != want.Outcome || g.Severity != want.Severity || !same(g.Value, want.Value) ||
					g.Threshold != want.Threshold || g.Message != want.Message {
					t.Errorf("%s reason %d in SQL:\n got %+v\nwant %+v", r.StarID, k, g, want)
				}
			}
			if len(got) != len(r.Reasons) {
				t.Fatalf("%s: %d reasons, want %d", r.StarID, len(got), len(r.Reasons))
			}
			for k, want := range r.Reasons {
				g := got[k]
				if g.RuleID != want.RuleID || g.Outcome != want.Outcome || g.Severity != want.Severity || !same(g.Value, want.Value) ||
					g.Threshold != want.Threshold || g.Message != want.Message {
					t.Errorf("%s reason %d:\n got %+v\nwant %+v", r.StarID, k, g, want)
				}
			}
		}
	}
	var forms int
	if err := l.db.QueryRow("SELECT count(*) FROM reason_forms WHERE run_id = ?", w.ID()).Scan(&forms); err != nil || forms != 4 {
		t.Errorf("%d reason forms, %v; want 4 (skip, fail, note with and without a message)", forms, err)
	}
	var typ string
	if err := l.db.QueryRow("SELECT typeof(value) FROM reasons WHERE run_id = ? AND star_id = 's0-03' AND seq = 1", w.ID()).Scan(&typ); err != nil || typ != "real" {
		t.Errorf("an integral value reads as %q, %v; want real, as the column was", typ, err)
	}
}

// reasonsView reads a star's reasons through the SQL view, as a user of the
// ledger would.
func reasonsView(t *testing.T, l *Ledger, runID int64, starID string) []ReasonRow {
	t.Helper()
	rows, err := l.db.Query(`SELECT rule_id, outcome, severity, value, threshold, message FROM reasons
		WHERE run_id = ? AND star_id = ? ORDER BY seq`, runID, starID)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var out []ReasonRow
	for rows.Next() {
		var r ReasonRow
		var sev, thr, msg sql.NullString
		var val sql.NullFloat64
		if err := rows.Scan(&r.RuleID, &r.Outcome, &sev, &val, &thr, &msg); err != nil {
			t.Fatal(err)
		}
		r.Severity, r.Value, r.Threshold, r.Message = sv(sev), fv(val), sv(thr), sv(msg)
		out = append(out, r)
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

// A reason list that is not what the writer writes is an error naming the
// star and the list, never a panic.
func TestReasonListMalformed(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	writeRun(t, l, []StarRecord{record("bad-1", 1, 0, "rejected")})
	for _, list := range []string{"[[]]", "[[\"x\"]]", "[[0,\"not a number\"]]", "[[99]]", "not json"} {
		if _, err := l.db.Exec("UPDATE computed_verdicts SET reason_list = ? WHERE star_id = 'bad-1'", list); err != nil {
			t.Fatal(err)
		}
		_, err := l.Reasons(ctx, 1, "bad-1")
		if err == nil || !strings.Contains(err.Error(), "bad-1") {
			t.Errorf("reason_list %s: error %v, want one naming the star", list, err)
		}
	}
}
