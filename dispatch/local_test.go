package dispatch

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// sh is a task running script under /bin/sh -c with extra as $1, $2, ...
func sh(name, script string, extra ...string) Task {
	return Task{Name: name, Args: append([]string{"/bin/sh", "-c", script, name}, extra...)}
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestLocalRunsTasksAndFinal(t *testing.T) {
	dir := t.TempDir()
	var tasks []Task
	for i := range 5 {
		tasks = append(tasks, sh(fmt.Sprintf("t%02d", i), `echo "out $0"; echo "err $0" >&2; echo $0 > "done.$0"`))
	}
	final := sh("gather", `ls done.* | wc -l > gathered`)
	var progress bytes.Buffer
	out, err := Local{Jobs: 2, Stdout: &progress}.Run(context.Background(), Job{Dir: dir, Tasks: tasks, Final: &final})
	if err != nil {
		t.Fatal(err)
	}
	if len(out.Failed) != 0 || !out.FinalOK || !out.FinalRan || out.FinalFailure != nil {
		t.Fatalf("outcome %+v", out)
	}
	if len(out.Ran) != 5 {
		t.Errorf("ran %v, want 5 tasks", out.Ran)
	}
	if got := strings.TrimSpace(readFile(t, filepath.Join(dir, "gathered"))); got != "5" {
		t.Errorf("final saw %s task outputs, want 5", got)
	}
	for _, tk := range tasks {
		log := readFile(t, filepath.Join(dir, "logs", tk.Name+".log"))
		if !strings.Contains(log, "out "+tk.Name) || !strings.Contains(log, "err "+tk.Name) {
			t.Errorf("log of %s lacks stdout or stderr: %q", tk.Name, log)
		}
		if m := readFile(t, filepath.Join(dir, "status", tk.Name+".ok")); m != "0\n" {
			t.Errorf("marker of %s holds %q", tk.Name, m)
		}
	}
	if n := strings.Count(progress.String(), "\n"); n != 6 {
		t.Errorf("%d progress lines, want 6:\n%s", n, progress.String())
	}
	// Nothing left to do: a second run starts nothing and reports success.
	out, err = Local{Jobs: 2}.Run(context.Background(), Job{Dir: dir, Tasks: tasks, Final: &final})
	if err != nil || len(out.Ran) != 0 || out.FinalRan || !out.FinalOK {
		t.Fatalf("second run: %+v, %v", out, err)
	}
}

func TestLocalConcurrency(t *testing.T) {
	for _, jobs := range []int{1, 3} {
		t.Run(strconv.Itoa(jobs), func(t *testing.T) {
			dir := t.TempDir()
			if err := os.Mkdir(filepath.Join(dir, "running"), 0o755); err != nil {
				t.Fatal(err)
			}
			// Each task marks itself running, records how many are, waits,
			// and unmarks itself.
			script := `touch "running/$0"; ls running | wc -l > "seen.$0"; sleep 0.3; rm "running/$0"`
			var tasks []Task
			for i := range 7 {
				tasks = append(tasks, sh(fmt.Sprintf("c%d", i), script))
			}
			out, err := Local{Jobs: jobs}.Run(context.Background(), Job{Dir: dir, Tasks: tasks})
			if err != nil || len(out.Failed) != 0 {
				t.Fatalf("%+v, %v", out, err)
			}
			most := 0
			for _, tk := range tasks {
				n, err := strconv.Atoi(strings.TrimSpace(readFile(t, filepath.Join(dir, "seen."+tk.Name))))
				if err != nil {
					t.Fatal(err)
				}
				most = max(most, n)
			}
			if most != jobs {
				t.Errorf("at most %d tasks ran at once, want %d", most, jobs)
			}
		})
	}
}

func TestLocalFailureSkipsFinalAndRerun(t *testing.T) {
	dir := t.TempDir()
	// t1 fails until the file "fixed" exists; every run appends to runs.
	tasks := []Task{
		sh("t0", `echo x >> runs.$0`),
		sh("t1", `echo x >> runs.$0; echo broken; [ -f fixed ] || exit 3`),
		sh("t2", `echo x >> runs.$0`),
	}
	final := sh("final", `echo x >> runs.final`)
	job := Job{Dir: dir, Tasks: tasks, Final: &final}
	out, err := Local{Jobs: 2}.Run(context.Background(), job)
	if err != nil {
		t.Fatal(err)
	}
	want := TaskFailure{Name: "t1", ExitCode: 3, Log: filepath.Join(dir, "logs", "t1.log")}
	if len(out.Failed) != 1 || out.Failed[0] != want {
		t.Fatalf("failed %+v, want %+v", out.Failed, want)
	}
	if out.FinalRan || out.FinalOK || exists(filepath.Join(dir, "runs.final")) {
		t.Fatalf("final ran after a failed task: %+v", out)
	}
	if m := readFile(t, filepath.Join(dir, "status", "t1.failed")); m != "3\n" {
		t.Errorf("failed marker holds %q", m)
	}
	if !strings.Contains(readFile(t, want.Log), "broken") {
		t.Errorf("log %s lacks the task's output", want.Log)
	}
	if p := names(Pending(job)); len(p) != 1 || p[0] != "t1" {
		t.Fatalf("pending %v, want [t1]", p)
	}

	// A missing marker counts as pending too.
	if err := os.Remove(filepath.Join(dir, "status", "t2.ok")); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "fixed"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	out, err = Local{}.Run(context.Background(), job)
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(out.Ran, ",") != "t1,t2" || len(out.Failed) != 0 || !out.FinalOK || !out.FinalRan {
		t.Fatalf("rerun %+v", out)
	}
	for name, n := range map[string]int{"t0": 1, "t1": 2, "t2": 2, "final": 1} {
		if got := strings.Count(readFile(t, filepath.Join(dir, "runs."+name)), "x"); got != n {
			t.Errorf("%s ran %d times, want %d", name, got, n)
		}
	}
	if exists(filepath.Join(dir, "status", "t1.failed")) {
		t.Error("stale failed marker of t1 left after it succeeded")
	}
}

func TestLocalFinalFailure(t *testing.T) {
	dir := t.TempDir()
	final := sh("merge", `exit 4`)
	out, err := Local{}.Run(context.Background(), Job{Dir: dir, Tasks: []Task{sh("a", "true")}, Final: &final})
	if err != nil {
		t.Fatal(err)
	}
	if !out.FinalRan || out.FinalOK || out.FinalFailure == nil || out.FinalFailure.ExitCode != 4 {
		t.Fatalf("outcome %+v", out)
	}
	// The final alone is pending now and runs again.
	final2 := sh("merge", `true`)
	out, err = Local{}.Run(context.Background(), Job{Dir: dir, Tasks: []Task{sh("a", "exit 1")}, Final: &final2})
	if err != nil || len(out.Ran) != 0 || !out.FinalRan || !out.FinalOK {
		t.Fatalf("rerun of the final: %+v, %v", out, err)
	}
}

func TestLocalMissingProgram(t *testing.T) {
	dir := t.TempDir()
	out, err := Local{}.Run(context.Background(), Job{Dir: dir, Tasks: []Task{{Name: "x", Args: []string{filepath.Join(dir, "no such")}}}})
	if err != nil {
		t.Fatal(err)
	}
	if len(out.Failed) != 1 || out.Failed[0].ExitCode != 127 {
		t.Fatalf("failed %+v", out.Failed)
	}
	if !strings.Contains(readFile(t, out.Failed[0].Log), "no such") {
		t.Error("log does not say which program could not run")
	}
}

func TestLocalCancelKillsChildren(t *testing.T) {
	dir := t.TempDir()
	ctx, cancel := context.WithTimeout(context.Background(), 300*time.Millisecond)
	defer cancel()
	// The shell's child outlives a kill of the shell alone.
	task := sh("slow", `(sleep 1; touch late) & wait`)
	start := time.Now()
	_, err := Local{}.Run(ctx, Job{Dir: dir, Tasks: []Task{task}})
	if !errors.Is(err, context.DeadlineExceeded) {
		t.Fatalf("error %v, want deadline exceeded", err)
	}
	if d := time.Since(start); d > 900*time.Millisecond {
		t.Errorf("Run returned after %v", d)
	}
	time.Sleep(1500 * time.Millisecond)
	if exists(filepath.Join(dir, "late")) {
		t.Error("child process survived cancellation")
	}
	if exists(filepath.Join(dir, "status", "slow.failed")) || exists(filepath.Join(dir, "status", "slow.ok")) {
		t.Error("cancelled task left a marker")
	}
}

func TestValidate(t *testing.T) {
	ok := sh("a", "true")
	for name, job := range map[string]Job{
		"no dir":        {Tasks: []Task{ok}},
		"unsafe name":   {Dir: "d", Tasks: []Task{sh("a/b", "true")}},
		"dot name":      {Dir: "d", Tasks: []Task{sh(".a", "true")}},
		"duplicate":     {Dir: "d", Tasks: []Task{ok, ok}},
		"final clash":   {Dir: "d", Tasks: []Task{ok}, Final: &ok},
		"relative prog": {Dir: "d", Tasks: []Task{{Name: "r", Args: []string{"sh"}}}},
		"no args":       {Dir: "d", Tasks: []Task{{Name: "r"}}},
	} {
		if err := job.Validate(); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
	if err := (Job{Dir: "d", Tasks: []Task{ok}, Final: &Task{Name: "f", Args: []string{"/bin/true"}}}).Validate(); err != nil {
		t.Errorf("valid job: %v", err)
	}
}
