package vetting

import (
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"syscall"
	"testing"
	"time"

	"starvet/campaign"
	"starvet/db"
)

// The kill test re-executes this test binary as a child that runs a real
// campaign into a ledger; the parent SIGKILLs it at random moments.
const killChildEnv = "STARVET_VETTING_KILL_CHILD"

func TestMain(m *testing.M) {
	if spec := os.Getenv(killChildEnv); spec != "" {
		os.Exit(killChild(spec))
	}
	os.Exit(m.Run())
}

func killChild(spec string) int {
	var campaignPath, ledger string
	if _, err := fmt.Sscanf(spec, "%s %s", &campaignPath, &ledger); err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 3
	}
	c, err := campaign.Load(campaignPath)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 3
	}
	e := &Engine{}
	if _, err := e.Run(context.Background(), c, RunOptions{LedgerPath: ledger, Full: true}); err != nil {
		fmt.Fprintln(os.Stderr, err)
		return 1
	}
	return 0
}

func TestKilledRunLeavesLedgerIntact(t *testing.T) {
	if testing.Short() {
		t.Skip("kill test runs several real campaigns")
	}
	seed := uint64(20261201)
	if s := os.Getenv("STARVET_SEED"); s != "" {
		seed, _ = strconv.ParseUint(s, 10, 64)
	}
	t.Logf("seed %d (set STARVET_SEED to replay)", seed)
	rng := rand.New(rand.NewPCG(seed, 1))

	sc := smallScenario(t, 8000, 3)
	ledger := filepath.Join(sc.Dir, "kill.db")
	ctx := context.Background()

	// A complete run first: it must survive every later kill untouched.
	t0 := time.Now()
	first := runCampaign(t, sc.CampaignPath, ledger, true)
	runTime := time.Since(t0)
	before := verdictsOf(t, ledger, first.RunID)

	for round := range 5 {
		// Kill somewhere between the start and a little past the end of a
		// typical run (a kill after the end is a normal exit).
		delay := time.Duration(rng.Float64() * float64(runTime) * 1.1)
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), killChildEnv+"="+sc.CampaignPath+" "+ledger)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		time.Sleep(delay)
		_ = cmd.Process.Signal(syscall.SIGKILL)
		_ = cmd.Wait()
		t.Logf("round %d: killed after %s", round, delay.Round(time.Millisecond))

		l, err := db.Open(ctx, ledger, db.Options{})
		if err != nil {
			t.Fatalf("round %d: reopen after kill: %v", round, err)
		}
		res, err := l.IntegrityCheck(ctx)
		if err != nil || res != "ok" {
			t.Fatalf("round %d: integrity_check = %q, %v", round, res, err)
		}
		runs, err := l.Runs(ctx)
		if err != nil {
			t.Fatal(err)
		}
		l.Close()
		for _, r := range runs {
			if r.State == "running" && !r.Interrupted {
				t.Errorf("round %d: run %d still running after its writer was killed", round, r.ID)
			}
		}
		after := verdictsOf(t, ledger, first.RunID)
		if len(after) != len(before) {
			t.Fatalf("round %d: run %d has %d verdicts, had %d", round, first.RunID, len(after), len(before))
		}
		for id, v := range before {
			if nanless(after[id]) != nanless(v) {
				t.Fatalf("round %d: run %d verdict of %q changed", round, first.RunID, id)
			}
		}
	}
	// The next run completes normally and the killed runs show as failed.
	last := runCampaign(t, sc.CampaignPath, ledger, false)
	l, err := db.Open(ctx, ledger, db.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	runs, err := l.Runs(ctx)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range runs {
		switch {
		case r.ID == last.RunID && r.State != "complete":
			t.Errorf("run %d after the kills: state %s, want complete", r.ID, r.State)
		case r.State == "running":
			t.Errorf("run %d: still running", r.ID)
		}
	}
	if got := verdictsOf(t, ledger, last.RunID); len(got) != len(before) {
		t.Errorf("final run has %d verdicts, want %d", len(got), len(before))
	}
}
