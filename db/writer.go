package db

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"fmt"
	"maps"
	"strings"
	"sync"

	sqlite3 "github.com/mattn/go-sqlite3"
)

// RunWriter appends one run. It holds the writer lock from BeginRun until
// Finish or Fail. Its methods must not be called concurrently.
type RunWriter struct {
	l    *Ledger
	id   int64
	lock *fileLock
	mu   sync.Mutex
	done bool
	// carriedAll is set by CarryForwardAll: this run already holds a
	// carried copy of every verdict of an earlier run, which AddStars
	// replaces for the stars it writes.
	carriedAll bool
	wroteStars bool // AddStars has written a batch
}

// BeginRun takes the writer lock (polling up to Options.LockWait, then
// ErrBusy), marks any run its dead predecessor left running as failed and
// inserts the new run in state running.
func (l *Ledger) BeginRun(ctx context.Context, info RunInfo) (*RunWriter, error) {
	if l.opt.ReadOnly {
		return nil, fmt.Errorf("ledger %s is open read-only; cannot begin a run", l.path)
	}
	lk, err := waitLock(ctx, l.lockPath(), l.opt.LockWait)
	if err != nil {
		return nil, fmt.Errorf("ledger %s: %w", l.path, err)
	}
	if lk == nil {
		return nil, fmt.Errorf("ledger %s is busy: another run is writing it (waited %s): %w", l.path, l.opt.LockWait, ErrBusy)
	}
	if err := l.failStale(ctx); err != nil {
		lk.release()
		return nil, err
	}
	res, err := l.db.ExecContext(ctx,
		`INSERT INTO runs (started_at, state, tool_version, campaign_hash, ruleset_hash, config_hash,
		 match_hash, model_hash, seed, "full", note)
		 VALUES (?, 'running', ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		l.stamp(), info.ToolVersion, ns(info.CampaignHash), ns(info.RulesetHash), ns(info.ConfigHash),
		ns(info.MatchHash), ns(info.ModelHash), info.Seed, b2i(info.Full), ns(info.Note))
	if err != nil {
		lk.release()
		return nil, fmt.Errorf("ledger %s: begin run: %w", l.path, err)
	}
	id, err := res.LastInsertId()
	if err != nil {
		lk.release()
		return nil, fmt.Errorf("ledger %s: begin run: %w", l.path, err)
	}
	return &RunWriter{l: l, id: id, lock: lk}, nil
}

// ID returns the run id.
func (w *RunWriter) ID() int64 { return w.id }

func (w *RunWriter) check() error {
	if w.done {
		return fmt.Errorf("ledger %s run %d: %w", w.l.path, w.id, ErrRunDone)
	}
	return nil
}

// AddCatalog records one input catalog.
func (w *RunWriter) AddCatalog(ctx context.Context, c CatalogRow) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	_, err := w.l.db.ExecContext(ctx,
		`INSERT INTO catalogs (run_id, name, release, file, file_sha256, rows_read, rows_kept,
		 rows_quarantined, epoch, role) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		w.id, c.Name, ns(c.Release), ns(c.File), ns(c.FileSHA256), c.RowsRead, c.RowsKept,
		c.RowsQuarantined, nf(c.Epoch), ns(c.Role))
	if err != nil {
		return fmt.Errorf("ledger %s run %d: catalog %q: %w", w.l.path, w.id, c.Name, err)
	}
	return nil
}

// AddQuarantine records rejected input rows in one transaction.
func (w *RunWriter) AddQuarantine(ctx context.Context, rows []QuarantineRow) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	err := w.l.inTx(ctx, func(tx *sql.Tx) error {
		st, err := tx.PrepareContext(ctx,
			`INSERT INTO quarantine (run_id, catalog, line, "column", column_name, value, reason)
			 VALUES (?, ?, ?, ?, ?, ?, ?)`)
		if err != nil {
			return err
		}
		defer st.Close()
		bg := context.Background() // per-row: no cancellation goroutine in the driver
		for _, q := range rows {
			if _, err := st.ExecContext(bg, w.id, q.Catalog, q.Line, q.Column, ns(q.ColumnName), q.Value, q.Reason); err != nil {
				return fmt.Errorf("%s line %d: %w", q.Catalog, q.Line, err)
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("ledger %s run %d: quarantine: %w", w.l.path, w.id, err)
	}
	return nil
}

const inputCols = "ra, dec, ra_err, dec_err, parallax, parallax_err, pm_ra, pm_ra_err, pm_dec, pm_dec_err, " +
	"corr_ra_dec, corr_parallax_pm_ra, corr_parallax_pm_dec, corr_pm_ra_pm_dec, rv, rv_err, " +
	"distance, distance_err, fit_residual, excess_noise, excess_noise_sig, visibility_periods, " +
	"duplicate_flag, mag, color, snr, distance_modulus, distance_modulus_err"

const verdictCols = "run_id, star_id, status, quality, computed_in_run, input_hash, distance_method, has_rv, " +
	"speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms, " +
	"p_unbound, p_unbound_lower, origin, p_gc_origin, gc_consistency, flight_time_myr, model_name"

func placeholders(n int) string {
	return strings.TrimSuffix(strings.Repeat("?, ", n), ", ")
}

// validate catches records the pipeline should never send.
func (w *RunWriter) validate(r *StarRecord) error {
	switch {
	case r.StarID == "":
		return fmt.Errorf("empty star id: %w", ErrBadRecord)
	case r.Verdict.Status == "":
		return fmt.Errorf("star %q: empty status: %w", r.StarID, ErrBadRecord)
	case r.Computed && r.Verdict.ComputedInRun != 0 && r.Verdict.ComputedInRun != w.id:
		return fmt.Errorf("star %q: computed in this run (%d) but verdict says %d: %w", r.StarID, w.id, r.Verdict.ComputedInRun, ErrBadRecord)
	case !r.Computed && (r.Inputs != nil || len(r.Matches) > 0 || len(r.Reasons) > 0 || len(r.Crossings) > 0):
		return fmt.Errorf("star %q: not computed in this run but carries inputs, matches or reasons (they live in its computing run): %w", r.StarID, ErrBadRecord)
	case !r.Computed && (r.Verdict.ComputedInRun <= 0 || r.Verdict.ComputedInRun >= w.id):
		return fmt.Errorf("star %q: not computed in this run, so computed_in_run must name an earlier run (got %d): %w", r.StarID, r.Verdict.ComputedInRun, ErrBadRecord)
	}
	return nil
}

// AddStars writes a batch in one transaction: the star, its verdict and,
// for a computed star, its inputs, matches and reasons. A failed batch
// leaves nothing of itself behind.
func (w *RunWriter) AddStars(ctx context.Context, batch []StarRecord) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	seen := make(map[string]struct{}, len(batch))
	for i := range batch {
		if err := w.validate(&batch[i]); err != nil {
			return fmt.Errorf("ledger %s run %d: %w", w.l.path, w.id, err)
		}
		if _, dup := seen[batch[i].StarID]; dup {
			return fmt.Errorf("ledger %s run %d: star %q twice in one batch: %w", w.l.path, w.id, batch[i].StarID, ErrBadRecord)
		}
		seen[batch[i].StarID] = struct{}{}
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	conn, err := w.l.db.Conn(ctx)
	if err != nil {
		return fmt.Errorf("ledger %s run %d: add stars: %w", w.l.path, w.id, err)
	}
	defer conn.Close()
	err = conn.Raw(func(dc any) error {
		c, ok := dc.(*sqlite3.SQLiteConn)
		if !ok {
			panic(fmt.Sprintf("db: driver connection is %T", dc))
		}
		// Fewer, larger checkpoints: index pages rewritten by every batch
		// are then copied back to the database file once, not per batch.
		if _, err := c.Exec("PRAGMA wal_autocheckpoint = 16384", nil); err != nil {
			return err
		}
		tx, err := c.Begin()
		if err != nil {
			return err
		}
		if err := w.writeStars(c, batch); err != nil {
			tx.Rollback()
			return err
		}
		return tx.Commit()
	})
	if err == nil {
		w.wroteStars = true
	}
	if err != nil {
		return fmt.Errorf("ledger %s run %d: add stars: %w", w.l.path, w.id, err)
	}
	return nil
}

// writeStars queues every row of the batch in multi-row inserts. It runs
// inside AddStars's transaction.
func (w *RunWriter) writeStars(c *sqlite3.SQLiteConn, batch []StarRecord) error {
	stars := newBulk(c, "stars", "INSERT INTO stars (star_id, first_run, last_run) VALUES", 3,
		"ON CONFLICT (star_id) DO UPDATE SET last_run = excluded.last_run")
	inputs := newBulk(c, "inputs", "INSERT INTO inputs (run_id, star_id, input_hash, "+inputCols+", dup_count) VALUES", 3+NumInputs+1, "")
	matches := newBulk(c, "matches", "INSERT INTO matches (run_id, star_id, catalog, source_id, sep_arcsec, match_prob, candidates, ambiguous) VALUES", 8, "")
	verdicts := newBulk(c, "verdicts", "INSERT INTO verdicts ("+verdictCols+") VALUES", 21, "")
	reasons := newBulk(c, "reasons", "INSERT INTO reasons (run_id, star_id, seq, rule_id, outcome, severity, value, threshold, message) VALUES", 9, "")
	crossings := newBulk(c, "crossings", "INSERT INTO crossings (run_id, star_id, x_kpc, y_kpc, t_myr) VALUES", 5, "")
	all := []*bulk{stars, inputs, matches, verdicts, reasons, crossings}
	defer func() {
		for _, b := range all {
			b.close()
		}
	}()
	id := w.id
	var uncarry driver.Stmt
	if w.carriedAll {
		// A star written now replaces its carried copy; a verdict this
		// run computed is never deleted, so writing a star twice is
		// still a primary-key error.
		st, err := c.Prepare("DELETE FROM verdicts WHERE run_id = ?1 AND star_id = ?2 AND computed_in_run <> ?1")
		if err != nil {
			return err
		}
		defer st.Close()
		uncarry = st
	}
	in := make([]driver.Value, 3+NumInputs+1)
	for i := range batch {
		r := &batch[i]
		sid := r.StarID
		if err := stars.add(sid, sid, id, id); err != nil {
			return err
		}
		if uncarry != nil {
			rows, err := uncarry.(driver.StmtQueryContext).QueryContext(context.Background(),
				[]driver.NamedValue{{Ordinal: 1, Value: id}, {Ordinal: 2, Value: sid}})
			if err == nil {
				err = rows.Close()
			}
			if err != nil {
				return fmt.Errorf("star %q: replace carried verdict: %w", sid, err)
			}
		}
		v := r.Verdict
		if r.Computed {
			v.ComputedInRun = id
			if r.Inputs != nil {
				if v.InputHash == "" {
					v.InputHash = r.Inputs.InputHash
				}
				in[0], in[1], in[2] = id, sid, r.Inputs.InputHash
				for j, x := range r.Inputs.Values {
					in[3+j] = dvf(x)
				}
				in[3+NumInputs] = int64(r.Inputs.DupCount)
				if err := inputs.add(sid, in...); err != nil {
					return err
				}
			}
			for _, m := range r.Matches {
				if err := matches.add(sid, id, sid, m.Catalog, dvs(m.SourceID), dvf(m.SepArcsec), dvf(m.MatchProb),
					int64(m.Candidates), b2i(m.Ambiguous)); err != nil {
					return err
				}
			}
			for _, x := range r.Crossings {
				if err := crossings.add(sid, id, sid, x.XKpc, x.YKpc, x.TMyr); err != nil {
					return err
				}
			}
			for k, x := range r.Reasons {
				if err := reasons.add(sid, id, sid, int64(k), x.RuleID, x.Outcome, dvs(x.Severity), dvf(x.Value),
					dvs(x.Threshold), dvs(x.Message)); err != nil {
					return err
				}
			}
		}
		if err := verdicts.add(sid, id, sid, v.Status, dvs(v.Quality), v.ComputedInRun, dvs(v.InputHash),
			dvs(v.DistanceMethod), b2i(v.HasRV), dvf(v.SpeedP16Kms), dvf(v.SpeedP50Kms), dvf(v.SpeedP84Kms),
			dvf(v.SpeedLowerP50Kms), dvf(v.RGCKpc), dvf(v.VEscKms), dvf(v.PUnbound), dvf(v.PUnboundLower),
			dvs(v.Origin), dvf(v.PGCOrigin), dvf(v.GCConsistency), dvf(v.FlightTimeMyr), dvs(v.ModelName)); err != nil {
			return err
		}
	}
	for _, b := range all {
		if err := b.flush(); err != nil {
			return err
		}
	}
	return nil
}

// CarryForwardBatch is how many stars CarryForward copies per transaction.
const CarryForwardBatch = 20000

// CarryForward copies the verdicts of starIDs from run fromRun into this
// run unchanged, computed_in_run included, in batched transactions. A star
// without a verdict in fromRun is an error naming it, and its batch is
// not written.
func (w *RunWriter) CarryForward(ctx context.Context, fromRun int64, starIDs []string) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	if fromRun <= 0 || fromRun >= w.id {
		return fmt.Errorf("ledger %s run %d: carry forward from run %d: must be an earlier run: %w", w.l.path, w.id, fromRun, ErrNoRun)
	}
	conn, err := w.l.db.Conn(ctx)
	if err != nil {
		return fmt.Errorf("ledger %s run %d: carry forward: %w", w.l.path, w.id, err)
	}
	defer conn.Close()
	err = conn.Raw(func(dc any) error {
		c := dc.(*sqlite3.SQLiteConn)
		if _, err := c.Exec("CREATE TEMP TABLE IF NOT EXISTS carry_ids (star_id TEXT PRIMARY KEY) WITHOUT ROWID", nil); err != nil {
			return err
		}
		for start := 0; start < len(starIDs); start += CarryForwardBatch {
			if err := ctx.Err(); err != nil {
				return err
			}
			ids := starIDs[start:min(start+CarryForwardBatch, len(starIDs))]
			if err := w.carryBatch(c, fromRun, ids); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("ledger %s run %d: carry forward from run %d: %w", w.l.path, w.id, fromRun, err)
	}
	return nil
}

// carryBatch stages ids in a temporary table and copies their verdicts
// with one INSERT ... SELECT, in one transaction.
func (w *RunWriter) carryBatch(c *sqlite3.SQLiteConn, fromRun int64, ids []string) (err error) {
	tx, err := c.Begin()
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tx.Rollback()
		}
	}()
	if _, err := c.Exec("DELETE FROM carry_ids", nil); err != nil {
		return err
	}
	stage := newBulk(c, "carried ids", "INSERT INTO carry_ids (star_id) VALUES", 1, "")
	defer stage.close()
	for _, id := range ids {
		if err := stage.add(id, id); err != nil {
			if strings.Contains(err.Error(), "UNIQUE") {
				return fmt.Errorf("star %q listed twice: %w", id, ErrBadRecord)
			}
			return err
		}
	}
	if err := stage.flush(); err != nil {
		if strings.Contains(err.Error(), "UNIQUE") {
			return fmt.Errorf("a star listed twice: %w: %v", ErrBadRecord, err)
		}
		return err
	}
	bg := context.Background()
	copySQL := "INSERT INTO verdicts (" + verdictCols + ") SELECT ?, v." +
		strings.ReplaceAll(strings.TrimPrefix(verdictCols, "run_id, "), ", ", ", v.") +
		" FROM carry_ids t CROSS JOIN verdicts v ON v.run_id = ? AND v.star_id = t.star_id" // CROSS JOIN: SQLite keeps carry_ids as the outer loop
	res, err := c.ExecContext(bg, copySQL, []driver.NamedValue{{Ordinal: 1, Value: w.id}, {Ordinal: 2, Value: fromRun}})
	if err != nil {
		return err
	}
	if n, _ := res.RowsAffected(); n != int64(len(ids)) {
		rows, err := c.QueryContext(bg, "SELECT star_id FROM carry_ids WHERE star_id NOT IN (SELECT star_id FROM verdicts WHERE run_id = ?) ORDER BY star_id LIMIT 1",
			[]driver.NamedValue{{Ordinal: 1, Value: fromRun}})
		if err != nil {
			return err
		}
		dest := make([]driver.Value, 1)
		missing := "?"
		if rows.Next(dest) == nil {
			missing = fmt.Sprint(dest[0])
		}
		rows.Close()
		return fmt.Errorf("star %q has no verdict in run %d (%d of %d carried stars missing): %w",
			missing, fromRun, int64(len(ids))-n, len(ids), ErrUnknownStar)
	}
	if _, err := c.ExecContext(bg, "UPDATE stars SET last_run = ? WHERE star_id IN (SELECT star_id FROM carry_ids)",
		[]driver.NamedValue{{Ordinal: 1, Value: w.id}}); err != nil {
		return err
	}
	return tx.Commit()
}

// CarryForwardAll copies every verdict of run fromRun into this run,
// unchanged (computed_in_run included), before any star is written, and
// returns how many it copied. Stars that AddStars writes afterwards replace
// their carried copy, so an incremental run may carry first (while its
// inputs are still being read) and write its recomputed stars after. It is
// an error once AddStars or a carry has run.
func (w *RunWriter) CarryForwardAll(ctx context.Context, fromRun int64) (int64, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return 0, err
	}
	if w.wroteStars || w.carriedAll {
		return 0, fmt.Errorf("ledger %s run %d: carry forward all of run %d: the run already holds stars: %w", w.l.path, w.id, fromRun, ErrBadRecord)
	}
	n, err := w.carryRest(ctx, fromRun, true)
	if err == nil {
		w.carriedAll = true
	}
	return n, err
}

// CarryForwardRest copies into this run, unchanged (computed_in_run
// included), the verdict of every star of run fromRun that has no verdict in
// this run yet, and returns how many it copied. It is one set-based
// statement, so carrying a million unchanged stars costs one pass over the
// earlier run's rows; call it after the run's computed stars are written.
func (w *RunWriter) CarryForwardRest(ctx context.Context, fromRun int64) (int64, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return 0, err
	}
	return w.carryRest(ctx, fromRun, false)
}

// carryRest copies fromRun's verdicts of the stars this run has not
// written; all says it has written none, so no star needs the probe.
func (w *RunWriter) carryRest(ctx context.Context, fromRun int64, all bool) (int64, error) {
	if fromRun <= 0 || fromRun >= w.id {
		return 0, fmt.Errorf("ledger %s run %d: carry forward from run %d: must be an earlier run: %w", w.l.path, w.id, fromRun, ErrNoRun)
	}
	copySQL := "INSERT INTO verdicts (" + verdictCols + ") SELECT ?1, " +
		strings.TrimPrefix(verdictCols, "run_id, ") + " FROM verdicts AS old WHERE old.run_id = ?2"
	if !all {
		copySQL += " AND NOT EXISTS (SELECT 1 FROM verdicts AS cur WHERE cur.run_id = ?1 AND cur.star_id = old.star_id)"
	}
	var n int64
	conn, err := w.l.db.Conn(ctx)
	if err != nil {
		return 0, fmt.Errorf("ledger %s run %d: carry forward from run %d: %w", w.l.path, w.id, fromRun, err)
	}
	defer conn.Close()
	// SQLite stages the copied rows in a temporary table (source and target
	// are the same table); keep it in memory, not in a temporary file.
	if _, err := conn.ExecContext(ctx, "PRAGMA temp_store = MEMORY"); err != nil {
		return 0, fmt.Errorf("ledger %s run %d: carry forward from run %d: %w", w.l.path, w.id, fromRun, err)
	}
	err = inConnTx(ctx, conn, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, copySQL, w.id, fromRun)
		if err != nil {
			return err
		}
		if n, err = res.RowsAffected(); err != nil {
			return err
		}
		// Every star with a verdict in fromRun now has one in this run.
		// Such a star has last_run >= fromRun (last_run is its latest
		// run); a star whose last_run is fromRun itself needs no probe.
		// Stars of this run's computed batches already say this run.
		_, err = tx.ExecContext(ctx, `UPDATE stars SET last_run = ?1
			WHERE last_run >= ?2 AND last_run < ?1
			AND (last_run = ?2 OR EXISTS (SELECT 1 FROM verdicts v WHERE v.run_id = ?2 AND v.star_id = stars.star_id))`,
			w.id, fromRun)
		return err
	})
	if err != nil {
		return 0, fmt.Errorf("ledger %s run %d: carry forward from run %d: %w", w.l.path, w.id, fromRun, err)
	}
	return n, nil
}

func inConnTx(ctx context.Context, conn *sql.Conn, fn func(*sql.Tx) error) error {
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	if err := fn(tx); err != nil {
		tx.Rollback()
		return err
	}
	return tx.Commit()
}

// Finish marks the run complete, stores its summary and releases the lock.
func (w *RunWriter) Finish(ctx context.Context, s RunSummary) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	db := w.l.db
	var total, computed, quarantined int64
	if err := db.QueryRowContext(ctx,
		`SELECT count(*), count(*) FILTER (WHERE computed_in_run = run_id) FROM verdicts WHERE run_id = ?`, w.id).
		Scan(&total, &computed); err != nil {
		return fmt.Errorf("ledger %s run %d: finish: %w", w.l.path, w.id, err)
	}
	if err := db.QueryRowContext(ctx, `SELECT count(*) FROM quarantine WHERE run_id = ?`, w.id).Scan(&quarantined); err != nil {
		return fmt.Errorf("ledger %s run %d: finish: %w", w.l.path, w.id, err)
	}
	counts, err := w.l.statusCounts(ctx, w.id)
	if err != nil {
		return err
	}
	for _, c := range []struct {
		name      string
		got, have int64
	}{
		{"stars_total", s.StarsTotal, total},
		{"stars_computed", s.StarsComputed, computed},
		{"stars_carried", s.StarsCarried, total - computed},
	} {
		if c.got != 0 && c.got != c.have {
			return fmt.Errorf("ledger %s run %d: %s is %d but the ledger holds %d: %w", w.l.path, w.id, c.name, c.got, c.have, ErrSummary)
		}
	}
	if s.Counts != nil && !maps.Equal(nonZero(s.Counts), counts) {
		return fmt.Errorf("ledger %s run %d: status counts %v but the ledger holds %v: %w", w.l.path, w.id, s.Counts, counts, ErrSummary)
	}
	// The pipeline may cap stored quarantine rows; its own total wins.
	if s.RowsQuarantined != 0 {
		quarantined = s.RowsQuarantined
	}
	cj, err := json.Marshal(counts)
	if err != nil {
		return err
	}
	_, err = db.ExecContext(ctx,
		`UPDATE runs SET state = 'complete', finished_at = ?, stars_total = ?, stars_computed = ?,
		 stars_carried = ?, rows_quarantined = ?, counts_json = ?,
		 note = CASE WHEN ? IS NULL THEN note WHEN note IS NULL THEN ? ELSE note || '; ' || ? END
		 WHERE id = ? AND state = 'running'`,
		w.l.stamp(), total, computed, total-computed, quarantined, string(cj),
		ns(s.Note), ns(s.Note), ns(s.Note), w.id)
	if err != nil {
		return fmt.Errorf("ledger %s run %d: finish: %w", w.l.path, w.id, err)
	}
	w.done = true
	w.lock.release()
	return nil
}

// Fail marks the run failed with the cause as its note and releases the
// lock. It runs even if ctx is already cancelled (cancellation is the
// usual cause).
func (w *RunWriter) Fail(ctx context.Context, cause error) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	ctx = context.WithoutCancel(ctx)
	note := "failed"
	if cause != nil {
		note = cause.Error()
	}
	_, err := w.l.db.ExecContext(ctx,
		`UPDATE runs SET state = 'failed', finished_at = ?,
		 note = CASE WHEN note IS NULL THEN ? ELSE note || '; ' || ? END WHERE id = ?`,
		w.l.stamp(), note, note, w.id)
	w.done = true
	w.lock.release()
	if err != nil {
		return fmt.Errorf("ledger %s run %d: mark failed: %w", w.l.path, w.id, err)
	}
	return nil
}

// nonZero drops zero counts, which the ledger cannot hold.
func nonZero(m map[string]int64) map[string]int64 {
	out := make(map[string]int64, len(m))
	for k, v := range m {
		if v != 0 {
			out[k] = v
		}
	}
	return out
}
