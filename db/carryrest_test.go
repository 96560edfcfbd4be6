package db

import (
	"context"
	"errors"
	"testing"
)

// TestCarryForwardRest: the set-based carry copies exactly the stars of the
// earlier run that this run has not written, unchanged, and leaves the
// earlier run's rows alone.
func TestCarryForwardRest(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	var recs []StarRecord
	for i, id := range []string{"C-1", "C-2", "C-3", "C'; DROP TABLE verdicts; --"} {
		recs = append(recs, record(id, i, 0, "rejected"))
	}
	r1 := writeRun(t, l, recs)
	before := runChecksum(t, l, r1)

	w, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, []StarRecord{record("C-2", 1, 0.5, "bound"), record("C-9", 9, 0, "bound")}); err != nil {
		t.Fatal(err)
	}
	n, err := w.CarryForwardRest(ctx, r1)
	if err != nil {
		t.Fatal(err)
	}
	if n != 3 {
		t.Fatalf("carried %d verdicts, want 3 (C-1, C-3 and the hostile id)", n)
	}
	if _, err := w.CarryForwardRest(ctx, w.ID()); err == nil {
		t.Error("carrying from the run itself: no error")
	}
	if err := w.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	got := map[string]VerdictRow{}
	if err := l.List(ctx, ListFilter{Run: w.ID()}, func(v VerdictRow) error { got[v.StarID] = v; return nil }); err != nil {
		t.Fatal(err)
	}
	want := map[string]struct {
		status   string
		computed int64
	}{"C-1": {"rejected", r1}, "C-2": {"bound", w.ID()}, "C-3": {"rejected", r1},
		"C'; DROP TABLE verdicts; --": {"rejected", r1}, "C-9": {"bound", w.ID()}}
	if len(got) != len(want) {
		t.Fatalf("run %d has %d verdicts, want %d", w.ID(), len(got), len(want))
	}
	for id, x := range want {
		if v := got[id]; v.Status != x.status || v.ComputedInRun != x.computed {
			t.Errorf("%s: status %q computed in %d, want %q in %d", id, v.Status, v.ComputedInRun, x.status, x.computed)
		}
	}
	if after := runChecksum(t, l, r1); after != before {
		t.Error("run 1's rows changed")
	}
}

// TestCarryForwardRestLastRun: after a carry, stars.last_run names the
// carrying run for every star it holds and nothing else, also when a failed
// run between the two wrote stars of its own (last_run is the latest run
// with a verdict for the star, failed runs included).
func TestCarryForwardRestLastRun(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	r1 := writeRun(t, l, []StarRecord{record("A", 1, 0, "bound"), record("B", 2, 0, "bound"), record("C", 3, 0, "bound")})

	// Run 2 writes B (again) and D, then fails.
	w2, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w2.AddStars(ctx, []StarRecord{record("B", 2, 1, "unbound"), record("D", 4, 0, "bound")}); err != nil {
		t.Fatal(err)
	}
	if err := w2.Fail(ctx, nil); err != nil {
		t.Fatal(err)
	}
	// Run 3 computes C and E and carries the rest of run 1.
	w3, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w3.AddStars(ctx, []StarRecord{record("C", 3, 1, "bound"), record("E", 5, 0, "bound")}); err != nil {
		t.Fatal(err)
	}
	if n, err := w3.CarryForwardRest(ctx, r1); err != nil || n != 2 {
		t.Fatalf("carried %d, %v; want A and B", n, err)
	}
	if err := w3.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		id          string
		first, last int64
	}{
		{"A", r1, w3.ID()}, {"B", r1, w3.ID()}, {"C", r1, w3.ID()}, {"D", w2.ID(), w2.ID()}, {"E", w3.ID(), w3.ID()},
	} {
		t.Run(tc.id, func(t *testing.T) {
			var first, last int64
			if err := l.db.QueryRow("SELECT first_run, last_run FROM stars WHERE star_id = ?", tc.id).Scan(&first, &last); err != nil {
				t.Fatal(err)
			}
			if first != tc.first || last != tc.last {
				t.Errorf("first_run %d last_run %d, want %d %d", first, last, tc.first, tc.last)
			}
		})
	}
}

// TestCarryForwardAll: carrying every verdict first and then writing the
// recomputed stars gives the same run as writing them first and carrying
// the rest; a star written twice is still an error.
func TestCarryForwardAll(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	r1 := writeRun(t, l, []StarRecord{record("A", 1, 0, "bound"), record("B", 2, 0, "bound"),
		record("C", 3, 0, "rejected"), record("D", 4, 0, "needs-rv")})
	before := runChecksum(t, l, r1)

	w, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if n, err := w.CarryForwardAll(ctx, r1); err != nil || n != 4 {
		t.Fatalf("carry forward all: %d, %v", n, err)
	}
	if _, err := w.CarryForwardAll(ctx, r1); !errors.Is(err, ErrBadRecord) {
		t.Errorf("second carry: %v, want ErrBadRecord", err)
	}
	withdrawn := StarRecord{StarID: "D", Computed: true, Verdict: NewVerdictRow("withdrawn")}
	if err := w.AddStars(ctx, []StarRecord{record("B", 2, 1, "unbound"), withdrawn, record("E", 5, 0, "bound")}); err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, []StarRecord{record("B", 2, 2, "marginal")}); err == nil {
		t.Error("B written twice in one run: no error")
	}
	if err := w.Finish(ctx, RunSummary{StarsTotal: 5, StarsComputed: 3, StarsCarried: 2,
		Counts: map[string]int64{"bound": 2, "unbound": 1, "rejected": 1, "withdrawn": 1}}); err != nil {
		t.Fatal(err)
	}
	got := map[string]VerdictRow{}
	if err := l.List(ctx, ListFilter{Run: w.ID()}, func(v VerdictRow) error { got[v.StarID] = v; return nil }); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		id       string
		status   string
		computed int64
	}{{"A", "bound", r1}, {"B", "unbound", w.ID()}, {"C", "rejected", r1}, {"D", "withdrawn", w.ID()}, {"E", "bound", w.ID()}} {
		t.Run(tc.id, func(t *testing.T) {
			v, ok := got[tc.id]
			if !ok || v.Status != tc.status || v.ComputedInRun != tc.computed {
				t.Errorf("verdict %+v (present %v), want status %q computed in %d", v, ok, tc.status, tc.computed)
			}
			var last int64
			if err := l.db.QueryRow("SELECT last_run FROM stars WHERE star_id = ?", tc.id).Scan(&last); err != nil || last != w.ID() {
				t.Errorf("last_run %d, %v; want %d", last, err, w.ID())
			}
		})
	}
	if len(got) != 5 {
		t.Errorf("%d verdicts, want 5", len(got))
	}
	if runChecksum(t, l, r1) != before {
		t.Error("run 1's rows changed")
	}
	// Carrying everything after stars were written is refused.
	w2, err := l.BeginRun(ctx, RunInfo{ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w2.AddStars(ctx, []StarRecord{record("A", 1, 3, "bound")}); err != nil {
		t.Fatal(err)
	}
	if _, err := w2.CarryForwardAll(ctx, w.ID()); !errors.Is(err, ErrBadRecord) {
		t.Errorf("carry all after AddStars: %v, want ErrBadRecord", err)
	}
	if err := w2.Fail(ctx, nil); err != nil {
		t.Fatal(err)
	}
}
