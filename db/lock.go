package db

import (
	"context"
	"errors"
	"fmt"
	"os"
	"syscall"
	"time"
)

// fileLock is an flock(2) on the side file <ledger>.lock. The kernel drops
// it when the holder dies, which is what lets the next writer tell a stale
// run from a live one.
type fileLock struct{ f *os.File }

// tryLock takes the lock without blocking; it returns nil, nil when another
// open file holds it.
func tryLock(path string, exclusive bool) (*fileLock, error) {
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("lock file: %w", err)
	}
	how := syscall.LOCK_SH
	if exclusive {
		how = syscall.LOCK_EX
	}
	if err := syscall.Flock(int(f.Fd()), how|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, nil
		}
		return nil, fmt.Errorf("lock file %s: %w", path, err)
	}
	return &fileLock{f}, nil
}

// waitLock polls tryLock until it succeeds, wait elapses or ctx ends.
func waitLock(ctx context.Context, path string, wait time.Duration) (*fileLock, error) {
	deadline := time.Now().Add(wait)
	for {
		lk, err := tryLock(path, true)
		if err != nil || lk != nil {
			return lk, err
		}
		if !time.Now().Before(deadline) {
			return nil, nil
		}
		t := time.NewTimer(lockPoll)
		select {
		case <-ctx.Done():
			t.Stop()
			return nil, ctx.Err()
		case <-t.C:
		}
	}
}

func (lk *fileLock) release() {
	if lk == nil || lk.f == nil {
		return
	}
	syscall.Flock(int(lk.f.Fd()), syscall.LOCK_UN)
	lk.f.Close()
	lk.f = nil
}

// writerActive reports whether some process holds the writer lock. It
// takes nothing: a read-only user may not be able to create the lock file,
// and a missing file means no writer.
func writerActive(path string) bool {
	f, err := os.Open(path)
	if err != nil {
		return false
	}
	defer f.Close()
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_SH|syscall.LOCK_NB); err != nil {
		return errors.Is(err, syscall.EWOULDBLOCK)
	}
	syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
	return false
}
