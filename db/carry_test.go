package db

import (
	"context"
	"fmt"
	"math/rand/v2"
	"sort"
	"testing"
)

// TestImplicitCarry: a run that writes some stars holds, for every other
// star of the previous complete run, that run's verdict (computed_in_run
// pointing at where it was computed), and leaves the earlier run's rows
// alone.
func TestImplicitCarry(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	var recs []StarRecord
	for i, id := range []string{"C-1", "C-2", "C-3", "C'; DROP TABLE verdicts; --"} {
		recs = append(recs, record(id, i, 0, "rejected"))
	}
	r1 := writeRun(t, l, recs)
	before := runChecksum(t, l, r1)

	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddStars(ctx, []StarRecord{record("C-2", 1, 0.5, "bound"), record("C-9", 9, 0, "bound")}); err != nil {
		t.Fatal(err)
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
		if v := got[id]; v.Status != x.status || v.ComputedInRun != x.computed || v.RunID != w.ID() {
			t.Errorf("%s: run %d status %q computed in %d, want run %d %q in %d", id, v.RunID, v.Status, v.ComputedInRun, w.ID(), x.status, x.computed)
		}
	}
	r, err := l.Run(ctx, w.ID())
	if err != nil {
		t.Fatal(err)
	}
	if r.StarsTotal != 5 || r.StarsComputed != 2 || r.StarsCarried != 3 || r.Counts["rejected"] != 3 || r.Counts["bound"] != 2 {
		t.Errorf("run summary %+v", r)
	}
	if after := runChecksum(t, l, r1); after != before {
		t.Error("run 1's rows changed")
	}
}

// TestFailedRunSets: a failed run's set is what it computed itself; the
// next run carries from the last complete run, never from the failed one;
// stars.first_run and last_run follow.
func TestFailedRunSets(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	r1 := writeRun(t, l, []StarRecord{record("A", 1, 0, "bound"), record("B", 2, 0, "bound"), record("C", 3, 0, "bound")})
	// Run 2 writes B (again) and D, then fails.
	w2, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
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
	w3, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	if err := w3.AddStars(ctx, []StarRecord{record("C", 3, 1, "marginal"), record("E", 5, 0, "bound")}); err != nil {
		t.Fatal(err)
	}
	if err := w3.Finish(ctx, RunSummary{}); err != nil {
		t.Fatal(err)
	}
	r2, r3 := w2.ID(), w3.ID()
	for _, tc := range []struct {
		run  int64
		want string
	}{
		{r1, "A:bound@1 B:bound@1 C:bound@1"},
		{r2, "B:unbound@2 D:bound@2"},
		{r3, "A:bound@1 B:bound@1 C:marginal@3 E:bound@3"},
	} {
		t.Run(fmt.Sprint("run ", tc.run), func(t *testing.T) {
			if got := listText(t, l, tc.run); got != tc.want {
				t.Errorf("verdicts %s, want %s", got, tc.want)
			}
		})
	}
	prev, err := l.PreviousState(ctx, r3)
	if err != nil {
		t.Fatal(err)
	}
	if got := prevText(prevMap(t, prev)); got != "A:bound@1 B:bound@1 C:marginal@3 E:bound@3" {
		t.Errorf("previous state of run 3: %s", got)
	}
	for _, tc := range []struct {
		id          string
		first, last int64
	}{
		{"A", r1, r3}, {"B", r1, r3}, {"C", r1, r3}, {"D", r2, r2}, {"E", r3, r3},
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

// TestVerdictSetsModel checks the verdicts view and PreviousState against
// the rule they implement, written out in Go: a complete or running run's
// set is the previous complete run's set with the run's own stars
// replacing or adding to it; a failed run's set is its own stars. Random
// runs (seeded) write random subsets of 40 ids, and a quarter of them fail.
func TestVerdictSetsModel(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	rng := rand.New(rand.NewPCG(6, 2026))
	statuses := []string{"rejected", "needs-rv", "bound", "marginal", "unbound", "withdrawn"}
	model := map[int64]map[string]string{} // run -> star -> "status@computed"
	var lastComplete int64
	for run := 1; run <= 14; run++ {
		w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "test"})
		if err != nil {
			t.Fatal(err)
		}
		set := map[string]string{}
		failed := run > 1 && rng.IntN(4) == 0
		if !failed && lastComplete != 0 {
			for id, v := range model[lastComplete] {
				set[id] = v
			}
		}
		var recs []StarRecord
		for k := range 40 {
			if rng.IntN(3) != 0 {
				continue
			}
			id := fmt.Sprintf("s-%02d", k)
			st := statuses[rng.IntN(len(statuses))]
			recs = append(recs, record(id, k, float64(run), st))
			set[id] = fmt.Sprintf("%s@%d", st, w.ID())
		}
		if err := w.AddStars(ctx, recs); err != nil {
			t.Fatal(err)
		}
		if failed {
			if err := w.Fail(ctx, nil); err != nil {
				t.Fatal(err)
			}
		} else {
			if err := w.Finish(ctx, RunSummary{}); err != nil {
				t.Fatal(err)
			}
			lastComplete = w.ID()
		}
		model[w.ID()] = set
	}
	for run, set := range model {
		want := setText(set)
		if got := listText(t, l, run); got != want {
			t.Errorf("run %d: view %s, want %s", run, got, want)
		}
		prev, err := l.PreviousState(ctx, run)
		if err != nil {
			t.Fatal(err)
		}
		if got := prevText(prevMap(t, prev)); got != want {
			t.Errorf("run %d: previous state %s, want %s", run, got, want)
		}
		c, err := l.StatusCounts(ctx, run)
		if err != nil {
			t.Fatal(err)
		}
		var n int64
		for _, x := range c {
			n += x
		}
		if n != int64(len(set)) {
			t.Errorf("run %d: status counts %v, %d stars, want %d", run, c, n, len(set))
		}
		r, err := l.Run(ctx, run)
		if err != nil {
			t.Fatal(err)
		}
		if r.State != "complete" {
			continue
		}
		// Finish's two ways of counting, forced: probes, and one pass.
		for _, limit := range []int64{1 << 40, 0} {
			got, _, err := l.countsAfter(ctx, run, limit)
			if err != nil || fmt.Sprint(got) != fmt.Sprint(c) || fmt.Sprint(r.Counts) != fmt.Sprint(c) {
				t.Errorf("run %d: counts after, probe limit %d: %v, %v; stored %v; want %v", run, limit, got, err, r.Counts, c)
			}
		}
	}
}

func listText(t *testing.T, l *Ledger, run int64) string {
	t.Helper()
	set := map[string]string{}
	err := l.List(context.Background(), ListFilter{Run: run}, func(v VerdictRow) error {
		if v.RunID != run {
			return fmt.Errorf("row of run %d listed for run %d", v.RunID, run)
		}
		set[v.StarID] = fmt.Sprintf("%s@%d", v.Status, v.ComputedInRun)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return setText(set)
}

func prevText(m map[string]PrevStar) string {
	set := map[string]string{}
	for id, p := range m {
		set[id] = fmt.Sprintf("%s@%d", p.Status, p.ComputedInRun)
	}
	return setText(set)
}

func setText(set map[string]string) string {
	ids := make([]string, 0, len(set))
	for id := range set {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	s := ""
	for i, id := range ids {
		if i > 0 {
			s += " "
		}
		s += id + ":" + set[id]
	}
	return s
}
