package tiling_test

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"starvet/db"
	"starvet/dispatch"
	"starvet/scenario"
	"starvet/tiling"
)

// Sizes of the live test. Order 2 splits the invented sky into over a
// hundred tiles (many borders); tilesPerTask bundles them into fewer array
// elements, since on a small cluster each element's scheduling costs
// more than a tile's run.
const (
	liveStars        = 4000
	liveOrder        = 2
	liveTilesPerTask = 8
)

// liveSlurm skips unless Slurm is usable here (dispatch.Slurm.Usable), and
// fails instead when STARVET_REQUIRE_SLURM=1.
func liveSlurm(t *testing.T) {
	t.Helper()
	err := dispatch.Slurm{}.Usable(context.Background())
	if err == nil {
		return
	}
	if os.Getenv("STARVET_REQUIRE_SLURM") == "1" {
		t.Fatalf("STARVET_REQUIRE_SLURM=1 but Slurm is not usable: %v", err)
	}
	t.Skipf("no usable Slurm cluster (start one with .ci/slurm/start): %v", err)
}

// live drives the starvet binary over one scenario, a single-run ledger
// and a split directory dispatched through Slurm.
type live struct {
	t        *testing.T
	ctx      context.Context
	exe      string // absolute: the array tasks run it
	campaign string
	single   string // ledger of the ordinary runs
	split    string
	gathered string // ledger the dispatches gather into
}

// starvet runs the binary and returns its standard output; err is set when
// it exits non-zero, with its standard error.
func (l *live) starvet(args ...string) (string, error) {
	l.t.Helper()
	cmd := exec.CommandContext(l.ctx, l.exe, append([]string{"--quiet"}, args...)...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	err := cmd.Run()
	if err != nil {
		err = fmt.Errorf("starvet %s: %w\nstdout:\n%s\nstderr:\n%s", strings.Join(args, " "), err, stdout.String(), stderr.String())
	}
	return stdout.String(), err
}

func (l *live) must(args ...string) string {
	l.t.Helper()
	out, err := l.starvet(args...)
	if err != nil {
		l.t.Fatal(err)
	}
	return out
}

func (l *live) timed(what string, fn func()) {
	l.t.Helper()
	t0 := time.Now()
	fn()
	l.t.Logf("%s: %s", what, time.Since(t0).Round(time.Millisecond))
}

func (l *live) runSingle() { l.must("run", l.campaign, "--ledger", l.single) }

func (l *live) tile() string {
	return l.must("tile", l.campaign, "--into", l.split, "--order", strconv.Itoa(liveOrder))
}

func (l *live) dispatch() (string, error) {
	return l.starvet("dispatch", l.split, "--ledger", l.gathered, "--executor", "slurm", "--workers", "1",
		"--tiles-per-task", strconv.Itoa(liveTilesPerTask))
}

var ranRE = regexp.MustCompile(`(?m)^(\d+) of (\d+) tiles run \(slurm executor\), Slurm jobs (\d+) (\d+) in `)

// dispatched parses dispatch's summary line: tiles run, tiles in the plan
// and the job ids (array, then gather). It checks that the submission was
// an array holding every tile run: DIR/slurm/jobids names the two jobs,
// tasks.txt has a line per tile and each array element left a log.
func (l *live) dispatched(out string) (ran, tiles int, ids []string) {
	l.t.Helper()
	m := ranRE.FindStringSubmatch(out)
	if m == nil {
		l.t.Fatalf("dispatch printed no \"N of M tiles run ..., Slurm jobs A B\" line:\n%s", out)
	}
	ran, _ = strconv.Atoi(m[1])
	tiles, _ = strconv.Atoi(m[2])
	ids = []string{m[3], m[4]}
	b, err := os.ReadFile(filepath.Join(l.split, "slurm", "jobids"))
	if err != nil {
		l.t.Fatal(err)
	}
	if got := strings.Fields(string(b)); !slices.Equal(got, ids) {
		l.t.Errorf("slurm/jobids holds %v, dispatch printed %v", got, ids)
	}
	b, err = os.ReadFile(filepath.Join(l.split, "slurm", "tasks.txt"))
	if err != nil {
		l.t.Fatal(err)
	}
	if n := strings.Count(string(b), "\n"); n != ran {
		l.t.Errorf("slurm/tasks.txt has %d lines, dispatch ran %d tiles", n, ran)
	}
	logs, err := filepath.Glob(filepath.Join(l.split, "logs", "slurm-"+ids[0]+"_*.log"))
	if want := (ran + liveTilesPerTask - 1) / liveTilesPerTask; err != nil || len(logs) != want {
		l.t.Errorf("array job %s left %d element logs (%v), want %d for %d tiles at %d a task", ids[0], len(logs), err, want, ran, liveTilesPerTask)
	}
	return ran, tiles, ids
}

// lastRun reads the last complete run of a ledger and its star digests.
func (l *live) lastRun(path string) (*db.Run, map[string]string) {
	l.t.Helper()
	led, err := db.Open(l.ctx, path, db.Options{ReadOnly: true})
	if err != nil {
		l.t.Fatal(err)
	}
	defer led.Close()
	run, err := led.LastCompleteRun(l.ctx)
	if err != nil {
		l.t.Fatal(err)
	}
	if run == nil {
		l.t.Fatalf("%s has no complete run", path)
	}
	return run, l.digests(path, run.ID)
}

func (l *live) digests(path string, runID int64) map[string]string {
	l.t.Helper()
	led, err := db.Open(l.ctx, path, db.Options{ReadOnly: true})
	if err != nil {
		l.t.Fatal(err)
	}
	defer led.Close()
	d, err := led.StarDigests(l.ctx, runID)
	if err != nil {
		l.t.Fatal(err)
	}
	return d
}

func (l *live) runs(path string) []db.Run {
	l.t.Helper()
	led, err := db.Open(l.ctx, path, db.Options{ReadOnly: true})
	if err != nil {
		l.t.Fatal(err)
	}
	defer led.Close()
	runs, err := led.Runs(l.ctx)
	if err != nil {
		l.t.Fatal(err)
	}
	return runs
}

// same checks that the gathered ledger's last complete run holds what the
// single ledger's does: the same stars with equal digests, and equal
// counts. It returns the single run.
func (l *live) same(stage string) *db.Run {
	l.t.Helper()
	sr, sd := l.lastRun(l.single)
	gr, gd := l.lastRun(l.gathered)
	var only, differ []string
	for id, d := range sd {
		g, ok := gd[id]
		switch {
		case !ok:
			only = append(only, id+" (single only)")
		case g != d:
			differ = append(differ, id)
		}
	}
	for id := range gd {
		if _, ok := sd[id]; !ok {
			only = append(only, id+" (gathered only)")
		}
	}
	slices.Sort(only)
	slices.Sort(differ)
	if len(only) > 0 || len(differ) > 0 {
		l.t.Errorf("%s: gathered run %d != single run %d: %d stars in one only (first: %v), %d of %d digests differ (first: %v)",
			stage, gr.ID, sr.ID, len(only), only[:min(5, len(only))], len(differ), len(sd), differ[:min(5, len(differ))])
	}
	if len(sd) < liveStars/2 {
		l.t.Errorf("%s: the single run has digests for %d stars, want most of %d", stage, len(sd), liveStars)
	}
	type counts struct {
		Total, Computed, Carried, Quarantined int64
		Status                                string
	}
	of := func(r *db.Run) counts {
		return counts{r.StarsTotal, r.StarsComputed, r.StarsCarried, r.RowsQuarantined, fmt.Sprint(r.Counts)}
	}
	if s, g := of(sr), of(gr); s != g {
		l.t.Errorf("%s: run counts differ:\n single   run %d: %+v\n gathered run %d: %+v", stage, sr.ID, s, gr.ID, g)
	}
	l.t.Logf("%s: single run %d and gathered run %d agree on %d stars (%d computed, %d carried)",
		stage, sr.ID, gr.ID, len(sd), gr.StarsComputed, gr.StarsCarried)
	return sr
}

// TestTiledSlurmEqualsSingle splits an invented campaign into sky tiles,
// runs them as a Slurm job array with the gather as a dependent job, and
// checks that the gathered ledger equals a single run's: first, after a
// catalog update (incremental), and after a tile failed and was rerun.
func TestTiledSlurmEqualsSingle(t *testing.T) {
	if testing.Short() {
		t.Skip("builds starvet and runs a campaign through Slurm several times: not in -short")
	}
	liveSlurm(t)
	start := time.Now()
	ctx, cancel := context.WithTimeout(context.Background(), 12*time.Minute)
	defer cancel()
	tmp := t.TempDir()
	l := &live{t: t, ctx: ctx, exe: filepath.Join(tmp, "starvet"), single: filepath.Join(tmp, "single.db"),
		split: filepath.Join(tmp, "split"), gathered: filepath.Join(tmp, "gathered.db")}

	_, file, _, ok := runtime.Caller(0)
	if !ok {
		t.Fatal("runtime.Caller gave no file")
	}
	l.timed("build", func() {
		cmd := exec.CommandContext(ctx, "go", "build", "-o", l.exe, "starvet/cmd/starvet")
		cmd.Dir = filepath.Dir(filepath.Dir(file))
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("go build: %v\n%s", err, out)
		}
	})
	var sc *scenario.Scenario
	l.timed("generate", func() {
		var err error
		if sc, err = scenario.Generate(scenario.Config{Seed: 31, Stars: liveStars}, filepath.Join(tmp, "scenario")); err != nil {
			t.Fatal(err)
		}
		if l.campaign, err = filepath.Abs(sc.CampaignPath); err != nil {
			t.Fatal(err)
		}
	})

	// 1. The first run, single and tiled.
	l.timed("single run 1", l.runSingle)
	l.timed("tile 1", func() { t.Log(strings.TrimSpace(l.tile())) })
	var out string
	l.timed("dispatch 1", func() {
		var err error
		if out, err = l.dispatch(); err != nil {
			t.Fatal(err)
		}
	})
	ran, tiles, _ := l.dispatched(out)
	t.Logf("dispatch 1: %d of %d tiles run", ran, tiles)
	if ran != tiles || tiles < 20 {
		t.Errorf("first dispatch ran %d of %d tiles, want all of at least 20", ran, tiles)
	}
	l.same("first run")
	firstGathered, _ := l.lastRun(l.gathered)

	// 2. A catalog update, run incrementally both ways.
	l.timed("update 2", func() {
		if err := scenario.Update(sc, sc.Dir, 32); err != nil {
			t.Fatal(err)
		}
	})
	l.timed("single run 2", l.runSingle)
	l.timed("tile 2", func() { l.tile() })
	l.timed("dispatch 2", func() {
		var err error
		if out, err = l.dispatch(); err != nil {
			t.Fatal(err)
		}
	})
	ran, tiles, _ = l.dispatched(out)
	t.Logf("dispatch 2 (release %d, %d primaries changed): %d of %d tiles run", sc.Release, len(sc.Changed), ran, tiles)
	if ran == 0 || ran > tiles {
		t.Errorf("second dispatch ran %d of %d tiles", ran, tiles)
	}
	sr := l.same("incremental run")
	if sr.StarsCarried == 0 {
		t.Errorf("the incremental single run %d carried no star forward", sr.ID)
	}
	// The comparison must see a stale gather: the gathered first run
	// differs from the single second run for the stars the update changed.
	stale, now := l.digests(l.gathered, firstGathered.ID), l.digests(l.single, sr.ID)
	changed := 0
	for id, d := range now {
		if stale[id] != d {
			changed++
		}
	}
	t.Logf("%d stars' digests changed with the update", changed)
	if changed == 0 {
		t.Errorf("no star's digest differs between gathered run %d and single run %d, after an update changing %d primaries", firstGathered.ID, sr.ID, len(sc.Changed))
	}

	// 3. Another update, with one tile's shard spoilt after the split: its
	// task fails, the gather must not run, and a rerun runs that tile only.
	l.timed("update 3", func() {
		if err := scenario.Update(sc, sc.Dir, 33); err != nil {
			t.Fatal(err)
		}
	})
	l.timed("single run 3", l.runSingle)
	l.tile()
	p, err := tiling.ReadPlan(l.split)
	if err != nil {
		t.Fatal(err)
	}
	states, err := tiling.States(ctx, l.split, p)
	if err != nil {
		t.Fatal(err)
	}
	var bad *tiling.Tile
	pending := 0
	for _, st := range states {
		if st.Problem == "" {
			continue
		}
		pending++
		if bad == nil || st.Tile.Owned > bad.Owned {
			bad = st.Tile
		}
	}
	if bad == nil {
		t.Fatalf("after update %d no tile needs a run", sc.Release)
	}
	shardPath := filepath.Join(bad.Dir(l.split), p.Catalogs[0].Name+".shard")
	info, err := os.Stat(shardPath)
	if err != nil {
		t.Fatal(err)
	}
	garbage := bytes.Repeat([]byte("not a shard, "), int(info.Size())/13+1)[:info.Size()]
	if err := os.WriteFile(shardPath, garbage, 0o644); err != nil {
		t.Fatal(err)
	}
	before := l.runs(l.gathered)
	l.timed("dispatch 3 (one tile spoilt)", func() { out, err = l.dispatch() })
	if err == nil {
		t.Fatalf("dispatch with tile %s's shard spoilt succeeded:\n%s", bad.Name, out)
	}
	ran, tiles, ids := l.dispatched(out)
	t.Logf("dispatch 3: %d of %d tiles run, tile %s spoilt", ran, tiles, bad.Name)
	if ran != pending {
		t.Errorf("dispatch 3 ran %d tiles, %d needed a run", ran, pending)
	}
	badLog := filepath.Join(l.split, "logs", bad.Name+".log")
	if want := fmt.Sprintf("  tile %s exited with ", bad.Name); !strings.Contains(out, want) || !strings.Contains(out, "(log "+badLog+")") {
		t.Errorf("dispatch 3 does not report tile %s failed with log %s:\n%s", bad.Name, badLog, out)
	}
	if n := strings.Count(out, "\n  tile "); n != 1 {
		t.Errorf("dispatch 3 reports %d failed tiles, want 1:\n%s", n, out)
	}
	if b, err := os.ReadFile(badLog); err != nil || len(bytes.TrimSpace(b)) == 0 {
		t.Errorf("log of the failed tile: %q, %v", b, err)
	} else {
		t.Logf("failed tile's log: %s", strings.TrimSpace(string(b)))
	}
	if after := l.runs(l.gathered); len(after) != len(before) {
		t.Errorf("the gathered ledger went from %d to %d runs although a tile failed", len(before), len(after))
	}
	if _, err := os.Stat(filepath.Join(l.split, "status", "gather.ok")); err == nil {
		t.Error("the gather left an ok marker although a tile failed")
	}
	// The controller may still know the gather job: it must be cancelled.
	// An error means it was already purged, which is fine.
	if info, err := exec.CommandContext(ctx, "scontrol", "show", "job", "-o", ids[1]).Output(); err == nil &&
		!strings.Contains(string(info), "JobState=CANCELLED") {
		t.Errorf("gather job %s was not cancelled: %s", ids[1], info)
	}

	l.timed("tile 3 (restores the shard)", func() { l.tile() })
	l.timed("dispatch 3 again", func() {
		if out, err = l.dispatch(); err != nil {
			t.Fatal(err)
		}
	})
	ran, tiles, _ = l.dispatched(out)
	t.Logf("dispatch 3 again: %d of %d tiles run", ran, tiles)
	if ran != 1 {
		t.Errorf("the rerun ran %d tiles, want only %s", ran, bad.Name)
	}
	if b, err := os.ReadFile(filepath.Join(l.split, "slurm", "tasks.txt")); err != nil || !strings.HasPrefix(string(b), bad.Name+" ") {
		t.Errorf("the rerun's tasks.txt is %q (%v), want tile %s", b, err, bad.Name)
	}
	if after := l.runs(l.gathered); len(after) != len(before)+1 {
		t.Errorf("the gathered ledger went from %d to %d runs after the rerun, want one more", len(before), len(after))
	}
	l.same("rerun after a failed tile")
	t.Logf("total %s", time.Since(start).Round(time.Millisecond))
}
