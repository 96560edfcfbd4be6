package db

import (
	"bytes"
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"fmt"
	"maps"
	"math"
	"strconv"
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
	// computed counts the verdicts of committed AddStars batches.
	computed int64
	// The run's reason forms (reason_forms) by what they share and by
	// id, and whether a committed batch wrote each; Encode makes them on
	// any goroutine, under formMu.
	formMu      sync.Mutex
	forms       map[formKey]form
	formList    []form
	formWritten []bool
}

// formKey is what the reasons of one form share. Whether the message is
// empty is part of it, so that a stored NULL message always means "the
// form's message".
type formKey struct {
	ruleID, outcome, severity, threshold string
	noMessage                            bool
}

// form is a row of reason_forms. Its message is that of the first reason
// written with it.
type form struct {
	id                                   int64
	ruleID, outcome, severity, threshold string
	message                              string
}

// BeginRun takes the writer lock (polling up to Options.LockWait, then
// ErrBusy), marks any run its dead predecessor left running as failed and
// inserts the new run in state running with its settings, in one
// transaction.
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
	if err := info.Settings.check(); err != nil {
		lk.release()
		return nil, fmt.Errorf("ledger %s: begin run: %w", l.path, err)
	}
	var id int64
	err = l.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx,
			`INSERT INTO runs (started_at, state, tool_version, campaign_hash, ruleset_hash, config_hash,
			 match_hash, model_hash, seed, "full", note)
			 VALUES (?, 'running', ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			l.stamp(), info.ToolVersion, ns(info.CampaignHash), ns(info.RulesetHash), info.Settings.ConfigHash(),
			ns(info.MatchHash), ns(info.ModelHash), info.Seed, b2i(info.Full), ns(info.Note))
		if err != nil {
			return err
		}
		if id, err = res.LastInsertId(); err != nil {
			return err
		}
		return insertSettings(ctx, tx, id, &info.Settings)
	})
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
			`INSERT INTO quarantine (run_id, catalog, line, table_row, "column", column_name, value, reason)
			 VALUES (?, ?, ?, ?, ?, ?, ?, ?)`)
		if err != nil {
			return err
		}
		defer st.Close()
		bg := context.Background() // per-row: no cancellation goroutine in the driver
		for _, q := range rows {
			var row any // NULL for a text file's line
			if q.Row > 0 {
				row = q.Row
			}
			if _, err := st.ExecContext(bg, w.id, q.Catalog, q.Line, row, q.Column, ns(q.ColumnName), q.Value, q.Reason); err != nil {
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
	"distance, distance_err, fit_residual, excess_noise, excess_noise_sig, fit_visits, " +
	"duplicate_flag, mag, color, snr, distance_modulus, distance_modulus_err"

const verdictSummaryCols = "speed_p16_kms, speed_p50_kms, speed_p84_kms, speed_lower_p50_kms, r_gc_kpc, v_esc_kms, " +
	"p_unbound, p_unbound_lower, origin, p_gc_origin, gc_consistency, flight_time_myr, model_name, " +
	"samples_used, distance_p16_kpc, distance_p50_kpc, distance_p84_kpc, p_unbound_flat, trace_samples, trace_crossed"

// verdictCols are the columns of the verdicts view, computedCols those of
// the computed_verdicts table behind it that hold the verdict
// (verdictValues of them); the table also holds the reason list and the
// star's inputs.
const (
	verdictCols   = "run_id, star_id, status, quality, computed_in_run, input_hash, distance_method, has_rv, " + verdictSummaryCols
	computedCols  = "star_id, computed_in_run, status, quality, input_hash, distance_method, has_rv, " + verdictSummaryCols
	verdictValues = 27
)

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
	case r.Verdict.ComputedInRun != 0 && r.Verdict.ComputedInRun != w.id:
		return fmt.Errorf("star %q: written by run %d but its verdict says computed in run %d (a verdict carried forward is never written: "+
			"the run's set includes it already): %w", r.StarID, w.id, r.Verdict.ComputedInRun, ErrBadRecord)
	}
	return nil
}

// AddStars writes a batch of stars computed in this run in one transaction:
// each star's verdict, inputs, matches, reasons and crossings. A star this
// run does not write keeps the verdict it had in the last complete run
// (see the verdicts view in SCHEMA.md); nothing is copied for it. A failed
// batch leaves nothing of itself behind. It is Encode then AddEncoded.
func (w *RunWriter) AddStars(ctx context.Context, batch []StarRecord) error {
	e, err := w.Encode(batch)
	if err != nil {
		return err
	}
	return w.AddEncoded(ctx, e)
}

// Encoded is a batch of stars turned into the values of the ledger's rows,
// ready for AddEncoded.
type Encoded struct {
	verdicts, matches, crossings   []driver.Value // row after row
	verdictIDs, matchIDs, crossIDs []string       // the star of each row, for errors
	forms                          []int64        // the run's reason forms the batch uses
}

// Encode checks a batch and turns it into row values: the part of writing
// that needs no connection, which a pipeline does on its own goroutines
// while the writer's goroutine writes the batch before (measured: about a
// fifth of the writer's time). It may be called from any goroutine, and
// the encoded batches added with AddEncoded in any order.
func (w *RunWriter) Encode(batch []StarRecord) (*Encoded, error) {
	seen := make(map[string]struct{}, len(batch))
	for i := range batch {
		if err := w.validate(&batch[i]); err != nil {
			return nil, fmt.Errorf("ledger %s run %d: %w", w.l.path, w.id, err)
		}
		if _, dup := seen[batch[i].StarID]; dup {
			return nil, fmt.Errorf("ledger %s run %d: star %q twice in one batch: %w", w.l.path, w.id, batch[i].StarID, ErrBadRecord)
		}
		seen[batch[i].StarID] = struct{}{}
	}
	const ncol = verdictValues + 1 + NumInputs + 1
	e := &Encoded{verdicts: make([]driver.Value, 0, ncol*len(batch)), verdictIDs: make([]string, 0, len(batch))}
	used := map[int64]bool{}
	var list []byte
	id := w.id
	for i := range batch {
		r := &batch[i]
		sid := r.StarID
		v := r.Verdict
		for _, m := range r.Matches {
			e.matches = append(e.matches, id, sid, m.Catalog, dvs(m.CounterpartID), dvf(m.SepArcsec), dvf(m.MatchProb),
				int64(m.Candidates), b2i(m.Ambiguous))
			e.matchIDs = append(e.matchIDs, sid)
		}
		for _, x := range r.Crossings {
			e.crossings = append(e.crossings, id, sid, x.XKpc, x.YKpc, x.TMyr)
			e.crossIDs = append(e.crossIDs, sid)
		}
		list = list[:0]
		for _, x := range r.Reasons {
			f := w.form(x)
			if !used[f.id] {
				used[f.id] = true
				e.forms = append(e.forms, f.id)
			}
			list = appendReason(list, f.id, x.Value, x.Message, x.Message != f.message)
		}
		var reasonList driver.Value
		if len(list) > 0 {
			reasonList = string(append(list, ']'))
		}
		var crossed driver.Value
		if v.TraceSamples > 0 {
			crossed = int64(v.TraceCrossed)
		}
		if r.Inputs != nil && v.InputHash == "" {
			v.InputHash = r.Inputs.InputHash
		}
		e.verdicts = append(e.verdicts, sid, id, v.Status, dvs(v.Quality), dvs(v.InputHash),
			dvs(v.DistanceMethod), b2i(v.HasRV), dvf(v.SpeedP16Kms), dvf(v.SpeedP50Kms), dvf(v.SpeedP84Kms),
			dvf(v.SpeedLowerP50Kms), dvf(v.RGCKpc), dvf(v.VEscKms), dvf(v.PUnbound), dvf(v.PUnboundLower),
			dvs(v.Origin), dvf(v.PGCOrigin), dvf(v.GCConsistency), dvf(v.FlightTimeMyr), dvs(v.ModelName),
			dvPos(v.SamplesUsed), dvf(v.DistP16Kpc), dvf(v.DistP50Kpc), dvf(v.DistP84Kpc), dvf(v.PUnboundFlat),
			dvPos(v.TraceSamples), crossed, reasonList)
		if r.Inputs != nil {
			for _, x := range r.Inputs.Values {
				e.verdicts = append(e.verdicts, dvf(x))
			}
			e.verdicts = append(e.verdicts, int64(r.Inputs.DupCount))
		} else {
			e.verdicts = append(e.verdicts, make([]driver.Value, NumInputs+1)...)
		}
		e.verdictIDs = append(e.verdictIDs, sid)
	}
	return e, nil
}

// form returns the run's reason form for x, making it when x is the first
// reason of its kind. A form's row is written with the first batch that
// uses it and commits (AddEncoded).
func (w *RunWriter) form(x ReasonRow) form {
	key := formKey{x.RuleID, x.Outcome, x.Severity, x.Threshold, x.Message == ""}
	w.formMu.Lock()
	defer w.formMu.Unlock()
	if f, ok := w.forms[key]; ok {
		return f
	}
	if w.forms == nil {
		w.forms = map[formKey]form{}
	}
	f := form{id: int64(len(w.formList)), ruleID: x.RuleID, outcome: x.Outcome, severity: x.Severity,
		threshold: x.Threshold, message: x.Message}
	w.forms[key] = f
	w.formList = append(w.formList, f)
	w.formWritten = append(w.formWritten, false)
	return f
}

// AddEncoded writes an encoded batch in one transaction, with the reason
// forms it uses that no committed batch wrote yet.
func (w *RunWriter) AddEncoded(ctx context.Context, e *Encoded) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	conn, err := w.l.db.Conn(ctx)
	if err != nil {
		return fmt.Errorf("ledger %s run %d: add stars: %w", w.l.path, w.id, err)
	}
	defer conn.Close()
	var newForms []form
	w.formMu.Lock()
	for _, id := range e.forms {
		if !w.formWritten[id] {
			newForms = append(newForms, w.formList[id])
		}
	}
	w.formMu.Unlock()
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
		if err := w.writeEncoded(c, e, newForms); err != nil {
			tx.Rollback()
			return err
		}
		return tx.Commit()
	})
	if err != nil {
		return fmt.Errorf("ledger %s run %d: add stars: %w", w.l.path, w.id, err)
	}
	w.formMu.Lock()
	for _, f := range newForms {
		w.formWritten[f.id] = true
	}
	w.formMu.Unlock()
	w.computed += int64(len(e.verdictIDs))
	return nil
}

// writeEncoded queues every row of the batch in multi-row inserts, inside
// AddEncoded's transaction: the writer's hot path.
func (w *RunWriter) writeEncoded(c *sqlite3.SQLiteConn, e *Encoded, newForms []form) error {
	const ncol = verdictValues + 1 + NumInputs + 1
	verdicts := newBulk(c, "verdicts", "INSERT INTO computed_verdicts ("+computedCols+", reason_list, "+inputCols+", dup_count) VALUES", ncol, "")
	matches := newBulk(c, "matches", "INSERT INTO matches (run_id, star_id, catalog, counterpart_id, sep_arcsec, match_prob, candidates, ambiguous) VALUES", 8, "")
	crossings := newBulk(c, "crossings", "INSERT INTO crossings (run_id, star_id, x_kpc, y_kpc, t_myr) VALUES", 5, "")
	forms := newBulk(c, "reason forms", "INSERT INTO reason_forms (run_id, form_id, rule_id, outcome, severity, threshold, message) VALUES", 7, "")
	all := []*bulk{verdicts, matches, crossings, forms}
	defer func() {
		for _, b := range all {
			b.close()
		}
	}()
	for _, f := range newForms {
		if err := forms.add(f.ruleID, w.id, f.id, f.ruleID, f.outcome, dvs(f.severity), dvs(f.threshold), dvs(f.message)); err != nil {
			return err
		}
	}
	for _, t := range []struct {
		b    *bulk
		vals []driver.Value
		ids  []string
	}{{verdicts, e.verdicts, e.verdictIDs}, {matches, e.matches, e.matchIDs}, {crossings, e.crossings, e.crossIDs}} {
		n := t.b.ncol
		for i, sid := range t.ids {
			if err := t.b.add(sid, t.vals[i*n:(i+1)*n]...); err != nil {
				return err
			}
		}
	}
	for _, b := range all {
		if err := b.flush(); err != nil {
			return err
		}
	}
	return nil
}

// appendReason appends one entry of a reason_list (schema 10) to list,
// opening the list with the first: [form_id, value, message], with value
// null when NaN and the message only when it is the reason's own. Values
// are the shortest decimals that read back as the same float64 (SQLite's
// JSON reader returns them bit for bit); infinities are written as
// +-9e999, which SQLite reads as infinity.
func appendReason(list []byte, formID int64, value float64, message string, ownMessage bool) []byte {
	if len(list) == 0 {
		list = append(list, '[')
	} else {
		list = append(list, ',')
	}
	list = append(list, '[')
	list = strconv.AppendInt(list, formID, 10)
	if math.IsNaN(value) && !ownMessage {
		return append(list, ']')
	}
	list = append(list, ',')
	switch {
	case math.IsNaN(value):
		list = append(list, "null"...)
	case math.IsInf(value, 1):
		list = append(list, "9e999"...)
	case math.IsInf(value, -1):
		list = append(list, "-9e999"...)
	default:
		list = strconv.AppendFloat(list, value, 'g', -1, 64)
	}
	if ownMessage {
		list = append(list, ',')
		list = appendJSONString(list, message)
	}
	return append(list, ']')
}

// appendJSONString appends s as a JSON string (RFC 8259, section 7),
// escaping only what JSON requires: encoding/json would also escape <, >
// and &, which the ledger's messages are full of.
func appendJSONString(b []byte, s string) []byte {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	enc.Encode(s) // a string always encodes
	return append(b, bytes.TrimSuffix(buf.Bytes(), []byte("\n"))...)
}

// Finish marks the run complete, stores its summary and releases the lock.
//
// The run's status counts are derived from the ledger at a cost
// proportional to what the run computed, not to its whole set: the counts
// of the last complete run before it (as that run's Finish stored them),
// plus the status of each star this run computed, minus the status that
// star had there. Non-zero fields of s must agree (ErrSummary).
func (w *RunWriter) Finish(ctx context.Context, s RunSummary) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	db := w.l.db
	fail := func(err error) error { return fmt.Errorf("ledger %s run %d: finish: %w", w.l.path, w.id, err) }
	counts, computed, err := w.l.countsAfter(ctx, w.id, probeLimit)
	if err != nil {
		return fail(err)
	}
	if computed != w.computed {
		return fail(fmt.Errorf("the ledger holds %d verdicts computed in this run, the writer committed %d: %w", computed, w.computed, ErrSummary))
	}
	var quarantined int64
	if err := db.QueryRowContext(ctx, `SELECT count(*) FROM quarantine WHERE run_id = ?`, w.id).Scan(&quarantined); err != nil {
		return fail(err)
	}
	var total int64
	for _, n := range counts {
		total += n
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
			return fail(fmt.Errorf("%s is %d but the ledger holds %d: %w", c.name, c.got, c.have, ErrSummary))
		}
	}
	if s.Counts != nil && !maps.Equal(nonZero(s.Counts), counts) {
		return fail(fmt.Errorf("status counts %v but the ledger holds %v: %w", s.Counts, counts, ErrSummary))
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
		return fail(err)
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
