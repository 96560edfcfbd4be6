package dispatch

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"time"
)

// Slurm runs a Job as a Slurm job array over the pending tasks and a final
// job that depends on it.
type Slurm struct {
	// Partition, Time, Mem and Account become #SBATCH options when set.
	Partition, Time, Mem, Account string
	// Extra holds further sbatch options, each written as an #SBATCH line.
	Extra []string
	// TasksPerArrayTask is the least number of consecutive tasks one array
	// element runs (0 means 1); more when the pending tasks would otherwise
	// need more than MaxArraySize-1 elements, as `scontrol show config`
	// reports it.
	TasksPerArrayTask int
	// MaxRunning, when > 0, limits how many array elements run at once.
	MaxRunning int
	// Wait makes Run poll squeue until the jobs leave the queue and then
	// report the markers; otherwise Run returns after submitting.
	Wait bool
	// Poll is the squeue interval while waiting; 0 means 5 s.
	Poll time.Duration
	// Bin is the directory of sbatch, squeue and scontrol; "" uses PATH.
	Bin string
}

// Run writes the scripts into DIR/slurm, submits the array of pending tasks
// and the final, and with Wait waits for them. The error is for an invalid
// Job, I/O, a Slurm command that failed, or ctx ending while waiting (the
// jobs are then left in the queue).
func (s Slurm) Run(ctx context.Context, job Job) (*Outcome, error) {
	job, err := prepare(job)
	if err != nil {
		return nil, err
	}
	pending := Pending(job)
	runFinal := finalPending(job, pending)
	out := &Outcome{Ran: names(pending)}
	if len(pending) == 0 && !runFinal {
		out.FinalOK = job.Final != nil
		return out, nil
	}
	sdir := filepath.Join(job.Dir, "slurm")
	if err := os.MkdirAll(sdir, 0o755); err != nil {
		return nil, fmt.Errorf("dispatch: %w", err)
	}
	if err := s.checkIdle(ctx, job.Dir); err != nil {
		return nil, err
	}

	base := "sv-" + jobBase(job.Dir)
	var arrayArgs []string
	if len(pending) > 0 {
		maxArray, err := s.maxArraySize(ctx)
		if err != nil {
			return nil, err
		}
		per := blockSize(len(pending), s.TasksPerArrayTask, maxArray)
		arrayArgs = []string{"--parsable", "--array=" + arrayRange(len(pending), per, s.MaxRunning), filepath.Join(sdir, "array.sh")}
		if err := s.writeArray(job, pending, base, per); err != nil {
			return nil, err
		}
	}
	if runFinal {
		if err := s.writeFinal(job, base); err != nil {
			return nil, err
		}
	}
	for _, t := range pending {
		if err := clearMarkers(job.Dir, t.Name); err != nil {
			return nil, err
		}
	}
	if runFinal {
		if err := clearMarkers(job.Dir, job.Final.Name); err != nil {
			return nil, err
		}
	}

	if arrayArgs != nil {
		id, err := s.sbatch(ctx, job.Dir, arrayArgs)
		if err != nil {
			return out, err
		}
		out.JobIDs = append(out.JobIDs, id)
	}
	if runFinal {
		args := []string{"--parsable"}
		if len(out.JobIDs) > 0 {
			args = append(args, "--dependency=afterok:"+out.JobIDs[0], "--kill-on-invalid-dep=yes")
		}
		id, err := s.sbatch(ctx, job.Dir, append(args, filepath.Join(sdir, "final.sh")))
		if err != nil {
			return out, err
		}
		out.JobIDs = append(out.JobIDs, id)
	}
	ids := filepath.Join(sdir, "jobids")
	if err := os.WriteFile(ids, []byte(strings.Join(out.JobIDs, "\n")+"\n"), 0o644); err != nil {
		return out, fmt.Errorf("dispatch: jobs %s submitted, but: %w", strings.Join(out.JobIDs, ","), err)
	}
	if !s.Wait {
		return out, nil
	}
	if err := s.wait(ctx, out.JobIDs); err != nil {
		return out, err
	}
	collect(out, job, pending, runFinal)
	return out, nil
}

func (s Slurm) writeArray(job Job, pending []Task, base string, per int) error {
	sdir := filepath.Join(job.Dir, "slurm")
	var tasks bytes.Buffer
	for _, t := range pending {
		line, err := taskLine(t)
		if err != nil {
			return err
		}
		tasks.WriteString(line + "\n")
	}
	script, err := s.arrayScript(job.Dir, base, per, len(pending))
	if err != nil {
		return err
	}
	if err := os.WriteFile(filepath.Join(sdir, "tasks.txt"), tasks.Bytes(), 0o644); err != nil {
		return fmt.Errorf("dispatch: %w", err)
	}
	if err := os.WriteFile(filepath.Join(sdir, "array.sh"), []byte(script), 0o755); err != nil {
		return fmt.Errorf("dispatch: %w", err)
	}
	return nil
}

func (s Slurm) writeFinal(job Job, base string) error {
	sdir := filepath.Join(job.Dir, "slurm")
	script, err := s.finalScript(job.Dir, base+"-final", *job.Final)
	if err != nil {
		return err
	}
	all := strings.Join(names(job.Tasks), "\n")
	if all != "" {
		all += "\n"
	}
	if err := os.WriteFile(filepath.Join(sdir, "names.txt"), []byte(all), 0o644); err != nil {
		return fmt.Errorf("dispatch: %w", err)
	}
	if err := os.WriteFile(filepath.Join(sdir, "final.sh"), []byte(script), 0o755); err != nil {
		return fmt.Errorf("dispatch: %w", err)
	}
	return nil
}

var unsafeRE = regexp.MustCompile(`[^A-Za-z0-9._-]+`)

// jobBase is a job-name-safe form of the directory's last element.
func jobBase(dir string) string {
	b := unsafeRE.ReplaceAllString(filepath.Base(dir), "_")
	if len(b) > 40 {
		b = b[:40]
	}
	return b
}

// blockSize is the number of tasks per array element for n tasks.
func blockSize(n, perMin, maxArraySize int) int {
	limit := max(maxArraySize-1, 1)
	return max(perMin, 1, (n+limit-1)/limit)
}

// arrayRange is the --array value for n tasks, per to an element.
func arrayRange(n, per, maxRunning int) string {
	r := fmt.Sprintf("0-%d", (n+per-1)/per-1)
	if maxRunning > 0 {
		r += "%" + strconv.Itoa(maxRunning)
	}
	return r
}

func (s Slurm) command(ctx context.Context, dir, name string, args ...string) (stdout []byte, err error) {
	prog := name
	if s.Bin != "" {
		prog = filepath.Join(s.Bin, name)
	}
	cmd := exec.CommandContext(ctx, prog, args...)
	cmd.Dir = dir
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	stdout, err = cmd.Output()
	if err != nil {
		msg := strings.TrimSpace(stderr.String())
		if msg == "" {
			msg = strings.TrimSpace(string(stdout))
		}
		return stdout, &CommandError{Command: append([]string{prog}, args...), Stderr: msg, Err: err}
	}
	return stdout, nil
}

// CommandError is a Slurm command that failed, with what it wrote to
// standard error.
type CommandError struct {
	Command []string
	Stderr  string
	Err     error
}

func (e *CommandError) Error() string {
	return fmt.Sprintf("dispatch: %s: %v: %s", strings.Join(e.Command, " "), e.Err, e.Stderr)
}

func (e *CommandError) Unwrap() error { return e.Err }

// sbatch submits and returns the job id from --parsable's "id[;cluster]".
func (s Slurm) sbatch(ctx context.Context, dir string, args []string) (string, error) {
	out, err := s.command(ctx, dir, "sbatch", args...)
	if err != nil {
		return "", err
	}
	id, _, _ := strings.Cut(strings.TrimSpace(string(out)), ";")
	if _, err := strconv.ParseUint(id, 10, 64); err != nil {
		return "", fmt.Errorf("dispatch: sbatch %s printed %q, not a job id", strings.Join(args, " "), out)
	}
	return id, nil
}

// maxArraySize reads MaxArraySize from the controller; Slurm's default
// when the line is missing.
func (s Slurm) maxArraySize(ctx context.Context) (int, error) {
	out, err := s.command(ctx, "", "scontrol", "show", "config")
	if err != nil {
		return 0, err
	}
	sc := bufio.NewScanner(bytes.NewReader(out))
	for sc.Scan() {
		k, v, ok := strings.Cut(sc.Text(), "=")
		if !ok || strings.TrimSpace(k) != "MaxArraySize" {
			continue
		}
		n, err := strconv.Atoi(strings.TrimSpace(v))
		if err != nil || n < 1 {
			return 0, fmt.Errorf("dispatch: scontrol show config: MaxArraySize %q is not a positive number", strings.TrimSpace(v))
		}
		return n, nil
	}
	return 1001, nil
}

// terminal holds the squeue states after which a job never runs again.
var terminal = map[string]bool{
	"COMPLETED": true, "FAILED": true, "CANCELLED": true, "TIMEOUT": true,
	"OUT_OF_MEMORY": true, "NODE_FAIL": true, "BOOT_FAIL": true,
	"DEADLINE": true, "PREEMPTED": true,
}

// active returns the ids among ids that squeue still lists in a state
// that is not final; array elements count for their array.
func (s Slurm) active(ctx context.Context, ids []string) ([]string, error) {
	out, err := s.command(ctx, "", "squeue", "-h", "-j", strings.Join(ids, ","), "-o", "%i %T")
	if err != nil {
		var ce *CommandError
		if errors.As(err, &ce) && strings.Contains(ce.Stderr, "Invalid job id") {
			return nil, nil
		}
		return nil, err
	}
	var left []string
	seen := map[string]bool{}
	sc := bufio.NewScanner(bytes.NewReader(out))
	for sc.Scan() {
		f := strings.Fields(sc.Text())
		if len(f) == 0 || (len(f) > 1 && terminal[f[1]]) {
			continue
		}
		id, _, _ := strings.Cut(f[0], "_")
		if !seen[id] {
			seen[id] = true
			left = append(left, id)
		}
	}
	return left, nil
}

// wait polls squeue until none of ids is active. A few squeue failures in
// a row are tolerated, since a busy controller may time out.
func (s Slurm) wait(ctx context.Context, ids []string) error {
	poll := s.Poll
	if poll <= 0 {
		poll = 5 * time.Second
	}
	fails := 0
	for {
		left, err := s.active(ctx, ids)
		switch {
		case err != nil && ctx.Err() == nil:
			fails++
			if fails >= 5 {
				return fmt.Errorf("dispatch: waiting for jobs %s: %w", strings.Join(ids, ","), err)
			}
		case err == nil:
			fails = 0
			if len(left) == 0 {
				return nil
			}
		}
		select {
		case <-ctx.Done():
			return fmt.Errorf("dispatch: stopped waiting for jobs %s (left queued): %w", strings.Join(ids, ","), ctx.Err())
		case <-time.After(poll):
		}
	}
}

// Usable reports why this machine cannot submit to a Slurm cluster now
// (sinfo fails, or shows no idle node), or nil when it can: the live
// tests' check.
func (s Slurm) Usable(ctx context.Context) error {
	ctx, cancel := context.WithTimeout(ctx, 10*time.Second)
	defer cancel()
	out, err := s.command(ctx, "", "sinfo", "-h", "-o", "%T")
	switch {
	case err != nil:
		return err
	case !strings.Contains("\n"+string(out), "\nidle"):
		return fmt.Errorf("sinfo shows no idle node: %q", strings.TrimSpace(string(out)))
	}
	return nil
}

// checkIdle refuses a submission while jobs of an earlier one on the same
// directory are queued, since they read the files about to be rewritten.
func (s Slurm) checkIdle(ctx context.Context, dir string) error {
	path := filepath.Join(dir, "slurm", "jobids")
	b, err := os.ReadFile(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("dispatch: %w", err)
	}
	ids := strings.Fields(string(b))
	if len(ids) == 0 {
		return nil
	}
	left, err := s.active(ctx, ids)
	if err != nil {
		return err
	}
	if len(left) > 0 {
		return fmt.Errorf("dispatch: jobs %s of an earlier submission in %s are still queued", strings.Join(left, ","), dir)
	}
	return nil
}
