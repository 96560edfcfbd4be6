package db

import (
	"context"
	"database/sql/driver"
	"fmt"
	"io"
	"strings"

	sqlite3 "github.com/mattn/go-sqlite3"
)

// A run's set of verdicts is the rule of the verdicts view (SCHEMA.md): for
// each star, its latest computation made in the run itself or, unless the
// run failed, in a complete run before it. The view states it in SQL for
// users; the commands and the pipeline read whole sets with scanSets, one
// pass over computed_verdicts in key order, which costs about a second
// per million stars where the view's per-row subquery costs several.

// eligibility says which runs' computations belong to run runID's set.
func (l *Ledger) eligibility(ctx context.Context, runID int64) (func(computedIn int64) bool, error) {
	// The file's states, not the display ones: a run whose writer died
	// but that no writable open has marked failed yet reads as running.
	rows, err := l.db.QueryContext(ctx, "SELECT id, state FROM runs WHERE id <= ?", runID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	state := map[int64]string{}
	for rows.Next() {
		var id int64
		var s string
		if err := rows.Scan(&id, &s); err != nil {
			return nil, err
		}
		state[id] = s
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	self, ok := state[runID]
	if !ok {
		return nil, fmt.Errorf("ledger %s has no run %d: %w", l.path, runID, ErrNoRun)
	}
	in := map[int64]bool{runID: true}
	if self != "failed" {
		for id, s := range state {
			if s == "complete" {
				in[id] = true
			}
		}
	}
	return func(c int64) bool { return in[c] }, nil
}

// scanSets walks computed_verdicts in (star_id, computed_in_run) order and
// calls fn once per star with the star's rows (each holding star_id,
// computed_in_run, then cols) and, for each of runs, the index of the row
// that is its verdict there, or -1 where the star is not in that run's set.
// The rows are reused after fn returns. It stays whole: one raw driver
// scan grouping rows into a reused pool is the ledger's hot read.
func (l *Ledger) scanSets(ctx context.Context, runs []int64, cols []string,
	fn func(starID string, group [][]driver.Value, pick []int) error) error {
	elig := make([]func(int64) bool, len(runs))
	for k, r := range runs {
		e, err := l.eligibility(ctx, r)
		if err != nil {
			return err
		}
		elig[k] = e
	}
	q := "SELECT star_id, computed_in_run"
	if len(cols) > 0 {
		q += ", " + strings.Join(cols, ", ")
	}
	q += " FROM computed_verdicts ORDER BY star_id, computed_in_run"
	conn, err := l.db.Conn(ctx)
	if err != nil {
		return err
	}
	defer conn.Close()
	return conn.Raw(func(dc any) error {
		c := dc.(*sqlite3.SQLiteConn)
		rows, err := c.QueryContext(ctx, q, nil)
		if err != nil {
			return err
		}
		defer rows.Close()
		var pool [][]driver.Value
		pick := make([]int, len(runs))
		n, cur := 0, ""
		flush := func() error {
			for k := range runs {
				pick[k] = -1
				for j := range n {
					if cin, _ := pool[j][1].(int64); elig[k](cin) {
						pick[k] = j // rows are in computed_in_run order: the last wins
					}
				}
			}
			return fn(cur, pool[:n], pick)
		}
		for {
			if n == len(pool) {
				pool = append(pool, make([]driver.Value, 2+len(cols)))
			}
			err := rows.Next(pool[n])
			if err == io.EOF {
				break
			}
			if err != nil {
				return err
			}
			id, _ := pool[n][0].(string)
			if n > 0 && id != cur {
				if err := flush(); err != nil {
					return err
				}
				pool[0], pool[n] = pool[n], pool[0]
				n = 0
			}
			cur = id
			n++
		}
		if n > 0 {
			return flush()
		}
		return nil
	})
}
