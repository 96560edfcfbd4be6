package db

import (
	"context"
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
