package db

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"maps"
	"strings"
	"sync"
)

// RunWriter appends one run. It holds the writer lock from BeginRun until
// Finish or Fail. Its methods must not be called concurrently.
type RunWriter struct {
	l    *Ledger
	id   int64
	lock *fileLock
	mu   sync.Mutex
	done bool
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

var (
	sqlStar = `INSERT INTO stars (star_id, first_run, last_run) VALUES (?, ?, ?)
		ON CONFLICT (star_id) DO UPDATE SET last_run = excluded.last_run`
	sqlInput = "INSERT INTO inputs (run_id, star_id, input_hash, " + inputCols + ", dup_count) VALUES (" +
		placeholders(3+NumInputs+1) + ")"
	sqlMatch = `INSERT INTO matches (run_id, star_id, catalog, source_id, sep_arcsec, match_prob, candidates, ambiguous)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?)`
	sqlVerdict = "INSERT INTO verdicts (" + verdictCols + ") VALUES (" + placeholders(21) + ")"
	sqlReason  = `INSERT INTO reasons (run_id, star_id, rule_id, outcome, severity, value, threshold, message)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?)`
)

// validate catches records the pipeline should never send.
func (w *RunWriter) validate(r *StarRecord) error {
	switch {
	case r.StarID == "":
		return fmt.Errorf("empty star id: %w", ErrBadRecord)
	case r.Verdict.Status == "":
		return fmt.Errorf("star %q: empty status: %w", r.StarID, ErrBadRecord)
	case r.Computed && r.Verdict.ComputedInRun != 0 && r.Verdict.ComputedInRun != w.id:
		return fmt.Errorf("star %q: computed in this run (%d) but verdict says %d: %w", r.StarID, w.id, r.Verdict.ComputedInRun, ErrBadRecord)
	case !r.Computed && (r.Inputs != nil || len(r.Matches) > 0 || len(r.Reasons) > 0):
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
	for i := range batch {
		if err := w.validate(&batch[i]); err != nil {
			return fmt.Errorf("ledger %s run %d: %w", w.l.path, w.id, err)
		}
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	err := w.l.inTx(ctx, func(tx *sql.Tx) error {
		var sts [5]*sql.Stmt
		for i, q := range []string{sqlStar, sqlInput, sqlMatch, sqlVerdict, sqlReason} {
			st, err := tx.PrepareContext(ctx, q)
			if err != nil {
				return err
			}
			defer st.Close()
			sts[i] = st
		}
		stStar, stInput, stMatch, stVerdict, stReason := sts[0], sts[1], sts[2], sts[3], sts[4]
		bg := context.Background() // per-row: no cancellation goroutine in the driver
		args := make([]any, 3+NumInputs+1)
		for i := range batch {
			r := &batch[i]
			if _, err := stStar.ExecContext(bg, r.StarID, w.id, w.id); err != nil {
				return fmt.Errorf("star %q: %w", r.StarID, err)
			}
			v := r.Verdict
			if r.Computed {
				v.ComputedInRun = w.id
			}
			if r.Computed && r.Inputs != nil {
				if v.InputHash == "" {
					v.InputHash = r.Inputs.InputHash
				}
				args[0], args[1], args[2] = w.id, r.StarID, r.Inputs.InputHash
				for j, x := range r.Inputs.Values {
					args[3+j] = nf(x)
				}
				args[3+NumInputs] = r.Inputs.DupCount
				if _, err := stInput.ExecContext(bg, args...); err != nil {
					return fmt.Errorf("star %q inputs: %w", r.StarID, err)
				}
			}
			if r.Computed {
				for _, m := range r.Matches {
					if _, err := stMatch.ExecContext(bg, w.id, r.StarID, m.Catalog, ns(m.SourceID), nf(m.SepArcsec),
						nf(m.MatchProb), m.Candidates, b2i(m.Ambiguous)); err != nil {
						return fmt.Errorf("star %q match in %s: %w", r.StarID, m.Catalog, err)
					}
				}
				for _, x := range r.Reasons {
					if _, err := stReason.ExecContext(bg, w.id, r.StarID, x.RuleID, x.Outcome, ns(x.Severity), nf(x.Value),
						ns(x.Threshold), ns(x.Message)); err != nil {
						return fmt.Errorf("star %q reason %s: %w", r.StarID, x.RuleID, err)
					}
				}
			}
			if _, err := stVerdict.ExecContext(bg, verdictArgs(w.id, r.StarID, &v)...); err != nil {
				return fmt.Errorf("star %q verdict: %w", r.StarID, err)
			}
		}
		return ctx.Err()
	})
	if err != nil {
		return fmt.Errorf("ledger %s run %d: add stars: %w", w.l.path, w.id, err)
	}
	return nil
}

func verdictArgs(runID int64, starID string, v *VerdictRow) []any {
	return []any{runID, starID, v.Status, ns(v.Quality), v.ComputedInRun, ns(v.InputHash), ns(v.DistanceMethod),
		b2i(v.HasRV), nf(v.SpeedP16Kms), nf(v.SpeedP50Kms), nf(v.SpeedP84Kms), nf(v.SpeedLowerP50Kms),
		nf(v.RGCKpc), nf(v.VEscKms), nf(v.PUnbound), nf(v.PUnboundLower), ns(v.Origin), nf(v.PGCOrigin),
		nf(v.GCConsistency), nf(v.FlightTimeMyr), ns(v.ModelName)}
}

// CarryForwardBatch is how many stars CarryForward copies per transaction.
const CarryForwardBatch = 20000

// CarryForward copies the verdicts of starIDs from run fromRun into this
// run unchanged, computed_in_run included, in batched transactions. A star
// without a verdict in fromRun is an error naming it.
func (w *RunWriter) CarryForward(ctx context.Context, fromRun int64, starIDs []string) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	if fromRun <= 0 || fromRun >= w.id {
		return fmt.Errorf("ledger %s run %d: carry forward from run %d: must be an earlier run: %w", w.l.path, w.id, fromRun, ErrNoRun)
	}
	copySQL := "INSERT INTO verdicts (" + verdictCols + ") SELECT ?, " +
		strings.TrimPrefix(verdictCols, "run_id, ") + " FROM verdicts WHERE run_id = ? AND star_id = ?"
	for start := 0; start < len(starIDs); start += CarryForwardBatch {
		if err := ctx.Err(); err != nil {
			return err
		}
		ids := starIDs[start:min(start+CarryForwardBatch, len(starIDs))]
		err := w.l.inTx(ctx, func(tx *sql.Tx) error {
			stCopy, err := tx.PrepareContext(ctx, copySQL)
			if err != nil {
				return err
			}
			defer stCopy.Close()
			stStar, err := tx.PrepareContext(ctx, `UPDATE stars SET last_run = ? WHERE star_id = ?`)
			if err != nil {
				return err
			}
			defer stStar.Close()
			bg := context.Background()
			for _, id := range ids {
				res, err := stCopy.ExecContext(bg, w.id, fromRun, id)
				if err != nil {
					return fmt.Errorf("star %q: %w", id, err)
				}
				if n, _ := res.RowsAffected(); n != 1 {
					return fmt.Errorf("star %q has no verdict in run %d: %w", id, fromRun, ErrUnknownStar)
				}
				if _, err := stStar.ExecContext(bg, w.id, id); err != nil {
					return fmt.Errorf("star %q: %w", id, err)
				}
			}
			return nil
		})
		if err != nil {
			return fmt.Errorf("ledger %s run %d: carry forward from run %d: %w", w.l.path, w.id, fromRun, err)
		}
	}
	return nil
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
	if s.Counts != nil && !maps.Equal(s.Counts, counts) {
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
