package db

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"strings"
	"syscall"
	"testing"
	"time"
)

const (
	killChildEnv  = "STARVET_KILL_CHILD"
	killLedgerEnv = "STARVET_KILL_LEDGER"
)

func TestMain(m *testing.M) {
	if os.Getenv(killChildEnv) == "1" {
		killChild(os.Getenv(killLedgerEnv))
		os.Exit(3) // never reached: killChild writes until killed
	}
	os.Exit(m.Run())
}

// killChild begins a run and writes batches forever, announcing each
// committed batch on stdout.
func killChild(path string) {
	ctx := context.Background()
	l, err := Open(ctx, path, Options{})
	if err != nil {
		fmt.Println("error", err)
		os.Exit(4)
	}
	w, err := l.BeginRun(ctx, RunInfo{Settings: testSettings, ToolVersion: "doomed"})
	if err != nil {
		fmt.Println("error", err)
		os.Exit(4)
	}
	fmt.Println("begun", w.ID())
	batch := make([]StarRecord, 200)
	for n := 0; ; n++ {
		for i := range batch {
			// The first 500 ids are the parent's: the failed run then holds
			// new computations of stars that complete runs hold too. No
			// id repeats, however many batches land before the kill (a run
			// writing one star twice is an error, not what is tested).
			batch[i] = record(fmt.Sprintf("K%06d", n*len(batch)+i), i, float64(n), "rejected")
		}
		if err := w.AddStars(ctx, batch); err != nil {
			fmt.Println("error", err)
			os.Exit(4)
		}
		fmt.Println("batch", n)
	}
}

func TestSIGKILLMidRun(t *testing.T) {
	if testing.Short() {
		t.Skip("spawns child processes")
	}
	ctx := context.Background()
	p := tempLedger(t)
	rng := rand.New(rand.NewPCG(2026, 12)) // fixed seed: the kill moments repeat
	var recs []StarRecord
	for i := range 500 {
		recs = append(recs, record(fmt.Sprintf("K%06d", i), i, 0, "accepted"))
	}
	l := openT(t, p, Options{})
	sums := map[int64]string{}
	counts := map[int64]int{}
	r := writeRun(t, l, recs)
	sums[r], counts[r] = runChecksum(t, l, r), countRows(t, l, "verdicts", r)
	l.Close()

	const rounds = 5
	for round := range rounds {
		t.Run(fmt.Sprintf("round %d", round), func(t *testing.T) {
			// Kill after 0..8 committed batches plus 0..60 ms, so some kills
			// land before the first commit and most inside a transaction.
			afterBatches := rng.IntN(9)
			extra := time.Duration(rng.IntN(60)) * time.Millisecond
			killedRun := runChild(t, p, afterBatches, extra)

			ro := openT(t, p, Options{ReadOnly: true})
			if kr, err := ro.Run(ctx, killedRun); err != nil || kr.StateText() != "failed (interrupted)" {
				t.Errorf("killed run seen read-only: %+v, %v", kr, err)
			}
			ro.Close()

			l := openT(t, p, Options{})
			if ok, err := l.IntegrityCheck(ctx); err != nil || ok != "ok" {
				t.Fatalf("integrity_check after kill: %q, %v", ok, err)
			}
			for id, want := range sums {
				if got := runChecksum(t, l, id); got != want {
					t.Errorf("complete run %d changed after kill", id)
				}
				if got := countRows(t, l, "verdicts", id); got != counts[id] {
					t.Errorf("complete run %d has %d verdicts, want %d", id, got, counts[id])
				}
			}
			kr, err := l.Run(ctx, killedRun)
			if err != nil {
				t.Fatal(err)
			}
			if kr.State != "failed" || kr.Interrupted || !strings.Contains(kr.Note, "interrupted") {
				t.Errorf("killed run %d after writable open: state %q note %q", killedRun, kr.State, kr.Note)
			}
			// Committed batches are whole: 200 verdicts each, one per reason pair.
			nv := countRows(t, l, "verdicts", killedRun)
			t.Logf("killed run %d after %d batches + %v: %d verdicts committed", killedRun, afterBatches, extra, nv)
			if nv%200 != 0 || countRows(t, l, "reasons", killedRun) != 2*nv {
				t.Errorf("killed run %d holds a partial batch: %d verdicts", killedRun, nv)
			}
			for i := range recs {
				recs[i] = record(recs[i].StarID, i, float64(round+1), "accepted")
			}
			next := writeRun(t, l, recs)
			got, err := l.Run(ctx, next)
			if err != nil || got.State != "complete" || got.StarsTotal != int64(len(recs)) {
				t.Fatalf("run after kill: %+v, %v", got, err)
			}
			sums[next], counts[next] = runChecksum(t, l, next), len(recs)
			l.Close()
		})
	}
}

// runChild starts the writer child, lets it commit afterBatches batches,
// waits extra, kills it with SIGKILL and returns its run id.
func runChild(t *testing.T, path string, afterBatches int, extra time.Duration) int64 {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), killChildEnv+"=1", killLedgerEnv+"="+path)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	cmd.Stderr = os.Stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	sc := bufio.NewScanner(out)
	var runID int64 = -1
	batches := 0
	for batches <= afterBatches && sc.Scan() {
		line := sc.Text()
		switch {
		case strings.HasPrefix(line, "begun "):
			fmt.Sscan(strings.TrimPrefix(line, "begun "), &runID)
			if afterBatches == 0 {
				batches = 1
			}
		case strings.HasPrefix(line, "batch "):
			batches++
		case strings.HasPrefix(line, "error"):
			t.Fatalf("child: %s", line)
		}
	}
	time.Sleep(extra)
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	go func() {
		for sc.Scan() {
		}
	}()
	err = cmd.Wait()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.Sys().(syscall.WaitStatus).Signal() != syscall.SIGKILL {
		t.Fatalf("child did not die by SIGKILL: %v", err)
	}
	if runID < 0 {
		t.Fatal("child never began its run")
	}
	return runID
}
