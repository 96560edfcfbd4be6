package dispatch

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"runtime"
	"sync"
	"syscall"
	"time"
)

// Local runs a Job as processes on this machine.
type Local struct {
	// Jobs is the number of tasks run at once; <= 0 means GOMAXPROCS.
	Jobs int
	// Stdout receives one progress line per finished task; nil for none.
	Stdout io.Writer
}

// Run runs the pending tasks of job, then the final when every task has
// succeeded. Task failures are reported in the Outcome, not as an error;
// the error is for an invalid Job, I/O on DIR, or ctx ending, which kills
// the running processes and their children.
func (l Local) Run(ctx context.Context, job Job) (*Outcome, error) {
	job, err := prepare(job)
	if err != nil {
		return nil, err
	}
	pending := Pending(job)
	runFinal := finalPending(job, pending)
	out := &Outcome{Ran: names(pending)}
	if runFinal {
		if err := clearMarkers(job.Dir, job.Final.Name); err != nil {
			return nil, err
		}
	}

	n := l.Jobs
	if n <= 0 {
		n = runtime.GOMAXPROCS(0)
	}
	var (
		mu       sync.Mutex
		firstErr error
		done     int
		wg       sync.WaitGroup
	)
	next := make(chan Task)
	for range min(n, len(pending)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for t := range next {
				code, err := runTask(ctx, job.Dir, t)
				mu.Lock()
				done++
				if err != nil && firstErr == nil {
					firstErr = err
				}
				l.progress(t.Name, code, err, done, len(pending))
				mu.Unlock()
			}
		}()
	}
feed:
	for _, t := range pending {
		select {
		case next <- t:
		case <-ctx.Done():
			break feed
		}
	}
	close(next)
	wg.Wait()
	if firstErr != nil {
		return out, firstErr
	}
	if err := ctx.Err(); err != nil {
		return out, fmt.Errorf("dispatch: run in %s stopped: %w", job.Dir, err)
	}
	collect(out, job, pending, false)
	if len(out.Failed) > 0 || !runFinal {
		if runFinal && l.Stdout != nil {
			fmt.Fprintf(l.Stdout, "dispatch: %d of %d tasks failed, final %s not run\n", len(out.Failed), len(pending), job.Final.Name)
		}
		return out, nil
	}
	code, err := runTask(ctx, job.Dir, *job.Final)
	l.progress(job.Final.Name, code, err, 1, 1)
	if err != nil {
		return out, err
	}
	if err := ctx.Err(); err != nil {
		return out, fmt.Errorf("dispatch: final %s in %s stopped: %w", job.Final.Name, job.Dir, err)
	}
	out.Failed = nil
	collect(out, job, pending, true)
	return out, nil
}

func (l Local) progress(name string, code int, err error, done, total int) {
	if l.Stdout == nil {
		return
	}
	switch {
	case err != nil:
		fmt.Fprintf(l.Stdout, "dispatch: [%d/%d] %s: %v\n", done, total, name, err)
	case code == 0:
		fmt.Fprintf(l.Stdout, "dispatch: [%d/%d] %s ok\n", done, total, name)
	default:
		fmt.Fprintf(l.Stdout, "dispatch: [%d/%d] %s failed with %d\n", done, total, name, code)
	}
}

// runTask runs t with its output in its log and records its marker. The
// error is for I/O on the log or marker; a program that cannot start
// counts as exit code 127 with the reason in its log.
func runTask(ctx context.Context, dir string, t Task) (int, error) {
	if err := clearMarkers(dir, t.Name); err != nil {
		return -1, err
	}
	path := logPath(dir, t.Name)
	log, err := os.Create(path)
	if err != nil {
		return -1, fmt.Errorf("dispatch: task %s: %w", t.Name, err)
	}
	defer log.Close()
	cmd := exec.CommandContext(ctx, t.Args[0], t.Args[1:]...)
	cmd.Dir = dir
	cmd.Stdout = log
	cmd.Stderr = log
	// Its own process group, so cancelling kills what a shell started too.
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	cmd.Cancel = func() error { return syscall.Kill(-cmd.Process.Pid, syscall.SIGKILL) }
	cmd.WaitDelay = 5 * time.Second
	err = cmd.Run()
	code := 0
	var exit *exec.ExitError
	switch {
	case err == nil:
	case errors.As(err, &exit):
		code = exit.ExitCode()
		if ws, ok := exit.Sys().(syscall.WaitStatus); ok && ws.Signaled() {
			code = 128 + int(ws.Signal())
		}
	default:
		code = 127
		fmt.Fprintf(log, "dispatch: cannot run %s: %v\n", t.Args[0], err)
	}
	if ctx.Err() != nil {
		// Killed by us: leave no marker, the task is still pending.
		return code, nil
	}
	if err := log.Close(); err != nil {
		return code, fmt.Errorf("dispatch: log of %s: %w", t.Name, err)
	}
	return code, writeMarker(dir, t.Name, code)
}
