package dispatch

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
)

// Task is one command to run.
type Task struct {
	// Name is unique within a Job and filesystem-safe: letters, digits,
	// '.', '_' and '-', not starting with '.' or '-'.
	Name string
	// Args[0] is the program as an absolute path; it runs with the Job's
	// Dir as working directory.
	Args []string
}

// Job is a list of independent tasks and an optional final task.
type Job struct {
	// Dir holds the scripts, DIR/logs/<name>.log and DIR/status markers.
	Dir   string
	Tasks []Task
	// Final runs only after every task succeeded; nil for none. Its name
	// must differ from every task's.
	Final *Task
}

// TaskFailure describes a task that did not succeed.
type TaskFailure struct {
	Name string
	// ExitCode is the task's exit status (128+N when killed by signal N
	// locally), or -1 when the task left no marker: never started,
	// cancelled, or killed by the scheduler.
	ExitCode int
	// Log is the path of the task's output.
	Log string
}

func (f TaskFailure) String() string {
	if f.ExitCode < 0 {
		return fmt.Sprintf("%s left no result (log %s)", f.Name, f.Log)
	}
	return fmt.Sprintf("%s exited with %d (log %s)", f.Name, f.ExitCode, f.Log)
}

// Outcome is what a Run did.
type Outcome struct {
	// Ran lists the tasks this Run started or submitted, in Job order.
	Ran []string
	// Failed lists the tasks of Ran that did not succeed, in Job order.
	// Without Slurm.Wait it is empty: nothing is known yet.
	Failed []TaskFailure
	// FinalRan tells whether the final ran in this Run (it left a marker).
	FinalRan bool
	// FinalOK tells whether the final's .ok marker exists when Run
	// returns; false when the Job has no final.
	FinalOK bool
	// FinalFailure is set when the final ran and failed.
	FinalFailure *TaskFailure
	// JobIDs are the Slurm job ids submitted: the array, then the final.
	JobIDs []string
}

// Executor runs a Job.
type Executor interface {
	Run(ctx context.Context, job Job) (*Outcome, error)
}

var nameRE = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9._-]*$`)

// Validate checks names and arguments of the Job's tasks.
func (j Job) Validate() error {
	if j.Dir == "" {
		return errors.New("dispatch: job has no directory")
	}
	seen := make(map[string]bool, len(j.Tasks)+1)
	check := func(t Task, what string) error {
		if !nameRE.MatchString(t.Name) || len(t.Name) > 200 {
			return fmt.Errorf("dispatch: %s name %q in %s is not filesystem-safe", what, t.Name, j.Dir)
		}
		if seen[t.Name] {
			return fmt.Errorf("dispatch: %s name %q used twice in %s", what, t.Name, j.Dir)
		}
		seen[t.Name] = true
		if len(t.Args) == 0 || !filepath.IsAbs(t.Args[0]) {
			return fmt.Errorf("dispatch: %s %s: the program must be an absolute path, got %q", what, t.Name, t.Args)
		}
		for _, a := range t.Args {
			if strings.IndexByte(a, 0) >= 0 {
				return fmt.Errorf("dispatch: %s %s: argument %q contains a NUL byte", what, t.Name, a)
			}
		}
		return nil
	}
	for _, t := range j.Tasks {
		if err := check(t, "task"); err != nil {
			return err
		}
	}
	if j.Final != nil {
		return check(*j.Final, "final task")
	}
	return nil
}

// prepare validates job, makes Dir absolute and creates logs and status.
func prepare(job Job) (Job, error) {
	if err := job.Validate(); err != nil {
		return job, err
	}
	dir, err := filepath.Abs(job.Dir)
	if err != nil {
		return job, fmt.Errorf("dispatch: job directory %s: %w", job.Dir, err)
	}
	job.Dir = dir
	for _, sub := range []string{"logs", "status"} {
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			return job, fmt.Errorf("dispatch: %w", err)
		}
	}
	return job, nil
}

func logPath(dir, name string) string { return filepath.Join(dir, "logs", name+".log") }

func markerPath(dir, name, kind string) string {
	return filepath.Join(dir, "status", name+"."+kind)
}

func exists(path string) bool {
	_, err := os.Stat(path)
	return err == nil
}

// Pending returns the tasks of job without an .ok marker, in Job order.
// The final is not included.
func Pending(job Job) []Task {
	var out []Task
	for _, t := range job.Tasks {
		if !exists(markerPath(job.Dir, t.Name, "ok")) {
			out = append(out, t)
		}
	}
	return out
}

// finalPending tells whether the final must run: some task is about to
// run, or it has not succeeded yet.
func finalPending(job Job, pending []Task) bool {
	return job.Final != nil && (len(pending) > 0 || !exists(markerPath(job.Dir, job.Final.Name, "ok")))
}

// clearMarkers removes the markers of a task about to run, so a stale
// result is never read back.
func clearMarkers(dir, name string) error {
	for _, kind := range []string{"ok", "failed"} {
		if err := os.Remove(markerPath(dir, name, kind)); err != nil && !errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("dispatch: %w", err)
		}
	}
	return nil
}

// writeMarker records code as name's result; the rename keeps a reader
// from seeing a half-written marker.
func writeMarker(dir, name string, code int) error {
	kind := "ok"
	if code != 0 {
		kind = "failed"
	}
	path := markerPath(dir, name, kind)
	tmp := path + ".tmp"
	if err := os.WriteFile(tmp, []byte(strconv.Itoa(code)+"\n"), 0o644); err != nil {
		return fmt.Errorf("dispatch: marker of %s: %w", name, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		return fmt.Errorf("dispatch: marker of %s: %w", name, err)
	}
	return nil
}

// result reads name's marker: ran tells whether one exists.
func result(dir, name string) (code int, ran bool) {
	if exists(markerPath(dir, name, "ok")) {
		return 0, true
	}
	b, err := os.ReadFile(markerPath(dir, name, "failed"))
	if err != nil {
		return -1, false
	}
	code, err = strconv.Atoi(strings.TrimSpace(string(b)))
	if err != nil || code == 0 {
		// A .failed marker is a failure whatever it holds.
		code = 1
	}
	return code, true
}

// collect fills out's failures and final state from the markers.
func collect(out *Outcome, job Job, ran []Task, finalRun bool) {
	for _, t := range ran {
		if code, _ := result(job.Dir, t.Name); code != 0 {
			out.Failed = append(out.Failed, TaskFailure{Name: t.Name, ExitCode: code, Log: logPath(job.Dir, t.Name)})
		}
	}
	if job.Final == nil {
		return
	}
	code, ran2 := result(job.Dir, job.Final.Name)
	out.FinalRan = finalRun && ran2
	out.FinalOK = code == 0 && ran2
	if out.FinalRan && code != 0 {
		out.FinalFailure = &TaskFailure{Name: job.Final.Name, ExitCode: code, Log: logPath(job.Dir, job.Final.Name)}
	}
}

func names(ts []Task) []string {
	out := make([]string, len(ts))
	for i, t := range ts {
		out[i] = t.Name
	}
	return out
}

// Forget removes the result markers of the named tasks (the final
// included), so that the next Run runs them again: for a caller that knows
// their inputs changed since they succeeded.
func Forget(dir string, names ...string) error {
	for _, n := range names {
		if err := clearMarkers(dir, n); err != nil {
			return err
		}
	}
	return nil
}
