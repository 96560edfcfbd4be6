package dispatch

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// liveSlurm skips unless Slurm is usable here (Slurm.Usable), and
// fails instead when STARVET_REQUIRE_SLURM=1.
func liveSlurm(t *testing.T) {
	t.Helper()
	err := Slurm{}.Usable(context.Background())
	if err == nil {
		return
	}
	if os.Getenv("STARVET_REQUIRE_SLURM") == "1" {
		t.Fatalf("STARVET_REQUIRE_SLURM=1 but Slurm is not usable: %v", err)
	}
	t.Skipf("no usable Slurm cluster (start one with .ci/slurm/start): %v", err)
}

// TestSlurmLive submits a five-task array and a dependent final to the real
// cluster; one task fails, so the final must never run, and a rerun must
// submit only that task and then run the final.
func TestSlurmLive(t *testing.T) {
	liveSlurm(t)
	dir := weirdDir(t)
	var tasks []Task
	for i := range 5 {
		tasks = append(tasks, sh(fmt.Sprintf("t%d", i),
			`echo x >> "runs.$0"; printf '[%s]' "$@" > "args.$0"; [ "$0" != t2 ] || [ -f fixed ] || exit 9`, "a b", "it's"))
	}
	final := sh("gather", `cat args.* > gathered`)
	job := Job{Dir: dir, Tasks: tasks, Final: &final}
	s := Slurm{Wait: true, Poll: 300 * time.Millisecond, MaxRunning: 2}
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()

	out, err := s.Run(ctx, job)
	if err != nil {
		t.Fatal(err)
	}
	if len(out.JobIDs) != 2 {
		t.Fatalf("job ids %v, want array and final", out.JobIDs)
	}
	want := TaskFailure{Name: "t2", ExitCode: 9, Log: filepath.Join(dir, "logs", "t2.log")}
	if len(out.Failed) != 1 || out.Failed[0] != want {
		t.Errorf("failed %+v, want %+v", out.Failed, want)
	}
	if out.FinalRan || out.FinalOK || exists(filepath.Join(dir, "gathered")) {
		t.Errorf("final ran after a failed task: %+v", out)
	}
	// The controller still knows the final for a while: it must have been
	// cancelled. An error here means it was already purged, which is fine.
	if info, err := exec.CommandContext(ctx, "scontrol", "show", "job", "-o", out.JobIDs[1]).Output(); err == nil &&
		!strings.Contains(string(info), "JobState=CANCELLED") {
		t.Errorf("final job %s was not cancelled: %s", out.JobIDs[1], info)
	}
	for i := range 5 {
		if got := readFile(t, filepath.Join(dir, fmt.Sprintf("args.t%d", i))); got != "[a b][it's]" {
			t.Errorf("t%d got arguments %s", i, got)
		}
	}
	logs, err := filepath.Glob(filepath.Join(dir, "logs", "slurm-"+out.JobIDs[0]+"_*.log"))
	if err != nil || len(logs) != 5 {
		t.Errorf("array logs %v (%v), want 5", logs, err)
	}

	if err := os.WriteFile(filepath.Join(dir, "fixed"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	out, err = s.Run(ctx, job)
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(out.Ran, ",") != "t2" || len(out.Failed) != 0 || !out.FinalRan || !out.FinalOK {
		t.Fatalf("rerun outcome %+v", out)
	}
	if n := strings.Count(readFile(t, filepath.Join(dir, "slurm", "tasks.txt")), "\n"); n != 1 {
		t.Errorf("rerun tasks.txt has %d lines, want 1", n)
	}
	for i := range 5 {
		n := strings.Count(readFile(t, filepath.Join(dir, fmt.Sprintf("runs.t%d", i))), "x")
		if want := map[bool]int{true: 2, false: 1}[i == 2]; n != want {
			t.Errorf("t%d ran %d times, want %d", i, n, want)
		}
	}
	if got := readFile(t, filepath.Join(dir, "gathered")); got != strings.Repeat("[a b][it's]", 5) {
		t.Errorf("final gathered %q", got)
	}
}
