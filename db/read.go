package db

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"time"

	sqlite3 "github.com/mattn/go-sqlite3"
)

const runCols = `id, started_at, finished_at, state, tool_version, campaign_hash, ruleset_hash, config_hash,
	match_hash, model_hash, seed, "full", stars_total, stars_computed, stars_carried, rows_quarantined,
	counts_json, note`

type scanner interface{ Scan(dest ...any) error }

func (l *Ledger) scanRun(sc scanner, writer *bool) (Run, error) {
	var (
		r                                 Run
		started                           string
		finished, cs, rs, cf, ms, mo, cj  sql.NullString
		note                              sql.NullString
		total, computed, carried, quarant sql.NullInt64
		full                              int64
	)
	if err := sc.Scan(&r.ID, &started, &finished, &r.State, &r.ToolVersion, &cs, &rs, &cf, &ms, &mo, &r.Seed,
		&full, &total, &computed, &carried, &quarant, &cj, &note); err != nil {
		return r, err
	}
	r.StartedAt, _ = time.Parse(time.RFC3339, started)
	if finished.Valid {
		r.FinishedAt, _ = time.Parse(time.RFC3339, finished.String)
	}
	r.CampaignHash, r.RulesetHash, r.ConfigHash, r.MatchHash, r.ModelHash = sv(cs), sv(rs), sv(cf), sv(ms), sv(mo)
	r.Full = full == 1
	r.StarsTotal, r.StarsComputed, r.StarsCarried, r.RowsQuarantined = total.Int64, computed.Int64, carried.Int64, quarant.Int64
	r.Note = sv(note)
	if cj.Valid {
		if err := json.Unmarshal([]byte(cj.String), &r.Counts); err != nil {
			return r, fmt.Errorf("run %d counts_json: %w", r.ID, err)
		}
	}
	if r.State == "running" {
		// Ask the lock once per query, lazily.
		if writer == nil {
			a := writerActive(l.lockPath())
			writer = &a
		}
		if !*writer {
			r.State, r.Interrupted = "failed", true
		}
	}
	return r, nil
}

// Runs returns every run, oldest first.
func (l *Ledger) Runs(ctx context.Context) ([]Run, error) {
	rows, err := l.db.QueryContext(ctx, "SELECT "+runCols+" FROM runs ORDER BY id")
	if err != nil {
		return nil, fmt.Errorf("ledger %s: runs: %w", l.path, err)
	}
	defer rows.Close()
	active := writerActive(l.lockPath())
	var out []Run
	for rows.Next() {
		r, err := l.scanRun(rows, &active)
		if err != nil {
			return nil, fmt.Errorf("ledger %s: runs: %w", l.path, err)
		}
		out = append(out, r)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("ledger %s: runs: %w", l.path, err)
	}
	return out, nil
}

// Run returns one run, or an error wrapping ErrNoRun.
func (l *Ledger) Run(ctx context.Context, id int64) (*Run, error) {
	r, err := l.scanRun(l.db.QueryRowContext(ctx, "SELECT "+runCols+" FROM runs WHERE id = ?", id), nil)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, fmt.Errorf("ledger %s has no run %d: %w", l.path, id, ErrNoRun)
	}
	if err != nil {
		return nil, fmt.Errorf("ledger %s: run %d: %w", l.path, id, err)
	}
	return &r, nil
}

// LastCompleteRun returns the newest complete run, or nil if there is none.
func (l *Ledger) LastCompleteRun(ctx context.Context) (*Run, error) {
	r, err := l.scanRun(l.db.QueryRowContext(ctx,
		"SELECT "+runCols+" FROM runs WHERE state = 'complete' ORDER BY id DESC LIMIT 1"), nil)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("ledger %s: last complete run: %w", l.path, err)
	}
	return &r, nil
}

// completeRuns returns the ids of complete runs, newest first, at most n.
func (l *Ledger) completeRuns(ctx context.Context, n int) ([]int64, error) {
	rows, err := l.db.QueryContext(ctx, "SELECT id FROM runs WHERE state = 'complete' ORDER BY id DESC LIMIT ?", n)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var ids []int64
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			return nil, err
		}
		ids = append(ids, id)
	}
	return ids, rows.Err()
}

// StatusCounts counts the verdicts of a run by status.
func (l *Ledger) StatusCounts(ctx context.Context, runID int64) (map[string]int64, error) {
	if _, err := l.Run(ctx, runID); err != nil {
		return nil, err
	}
	return l.statusCounts(ctx, runID)
}

func (l *Ledger) statusCounts(ctx context.Context, runID int64) (map[string]int64, error) {
	rows, err := l.db.QueryContext(ctx, "SELECT status, count(*) FROM verdicts WHERE run_id = ? GROUP BY status", runID)
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: status counts: %w", l.path, runID, err)
	}
	defer rows.Close()
	m := map[string]int64{}
	for rows.Next() {
		var s string
		var n int64
		if err := rows.Scan(&s, &n); err != nil {
			return nil, err
		}
		m[s] = n
	}
	return m, rows.Err()
}

// countsAfter returns the status counts of run runID's set, as if it were
// complete, and how many verdicts it computed, from the counts of the last
// complete run before it and one probe per star runID computed: each adds
// its new status and takes away the one it had in that run.
func (l *Ledger) countsAfter(ctx context.Context, runID int64) (map[string]int64, int64, error) {
	counts := map[string]int64{}
	var prev sql.NullInt64
	var cj sql.NullString
	err := l.db.QueryRowContext(ctx,
		"SELECT id, counts_json FROM runs WHERE id < ? AND state = 'complete' ORDER BY id DESC LIMIT 1", runID).Scan(&prev, &cj)
	switch {
	case errors.Is(err, sql.ErrNoRows):
	case err != nil:
		return nil, 0, err
	case cj.Valid:
		if err := json.Unmarshal([]byte(cj.String), &counts); err != nil {
			return nil, 0, fmt.Errorf("run %d counts_json: %w", prev.Int64, err)
		}
	default:
		if counts, err = l.statusCounts(ctx, prev.Int64); err != nil {
			return nil, 0, err
		}
	}
	rows, err := l.db.QueryContext(ctx, `SELECT v.status, (
			SELECT p.status FROM computed_verdicts p JOIN runs c ON c.id = p.computed_in_run
			 WHERE p.star_id = v.star_id AND p.computed_in_run < ?1 AND c.state = 'complete'
			 ORDER BY p.computed_in_run DESC LIMIT 1)
		  FROM computed_verdicts v WHERE v.computed_in_run = ?1`, runID)
	if err != nil {
		return nil, 0, err
	}
	defer rows.Close()
	var computed int64
	for rows.Next() {
		var now string
		var before sql.NullString
		if err := rows.Scan(&now, &before); err != nil {
			return nil, 0, err
		}
		computed++
		counts[now]++
		if before.Valid {
			counts[before.String]--
		}
	}
	if err := rows.Err(); err != nil {
		return nil, 0, err
	}
	for k, n := range counts {
		if n < 0 {
			return nil, 0, fmt.Errorf("%d stars %q after run %d: the previous run's counts disagree with its verdicts: %w", n, k, runID, ErrSummary)
		}
	}
	return nonZero(counts), computed, nil
}

// eligibility says which runs' computations belong to run runID's set:
// its own, and, unless it failed, those of complete runs before it (the
// rule of the verdicts view).
func (l *Ledger) eligibility(ctx context.Context, runID int64) (func(computedIn int64) bool, error) {
	rs, err := l.Runs(ctx)
	if err != nil {
		return nil, err
	}
	ok := map[int64]bool{runID: true}
	var self *Run
	for i := range rs {
		if rs[i].ID == runID {
			self = &rs[i]
		}
	}
	if self == nil {
		return nil, fmt.Errorf("ledger %s has no run %d: %w", l.path, runID, ErrNoRun)
	}
	// The file's state, not the display one: a run whose writer died but
	// that no writable open has marked failed yet still reads as running.
	var state string
	if err := l.db.QueryRowContext(ctx, "SELECT state FROM runs WHERE id = ?", runID).Scan(&state); err != nil {
		return nil, err
	}
	if state != "failed" {
		for _, r := range rs {
			if r.ID < runID && r.State == "complete" {
				ok[r.ID] = true
			}
		}
	}
	return func(c int64) bool { return ok[c] }, nil
}

// PreviousState returns status, input hash and computing run of every star
// of run runID's set, in one pass over computed_verdicts on the raw driver
// connection (database/sql's per-row conversions would double its cost).
func (l *Ledger) PreviousState(ctx context.Context, runID int64) (map[string]PrevStar, error) {
	fail := func(err error) error { return fmt.Errorf("ledger %s run %d: previous state: %w", l.path, runID, err) }
	eligible, err := l.eligibility(ctx, runID)
	if err != nil {
		return nil, err
	}
	r, err := l.Run(ctx, runID)
	if err != nil {
		return nil, err
	}
	m := make(map[string]PrevStar, max(r.StarsTotal, 0))
	conn, err := l.db.Conn(ctx)
	if err != nil {
		return nil, fail(err)
	}
	defer conn.Close()
	err = conn.Raw(func(dc any) error {
		c := dc.(*sqlite3.SQLiteConn)
		rows, err := c.QueryContext(ctx,
			"SELECT star_id, computed_in_run, status, input_hash FROM computed_verdicts WHERE computed_in_run <= ?",
			[]driver.NamedValue{{Ordinal: 1, Value: runID}})
		if err != nil {
			return err
		}
		defer rows.Close()
		dest := make([]driver.Value, 4)
		statuses := map[string]string{} // one string per status word
		for {
			if err := rows.Next(dest); err == io.EOF {
				return nil
			} else if err != nil {
				return err
			}
			cin, _ := dest[1].(int64)
			if !eligible(cin) {
				continue
			}
			id, _ := dest[0].(string)
			st, _ := dest[2].(string)
			if s, ok := statuses[st]; ok {
				st = s
			} else {
				statuses[st] = st
			}
			h, _ := dest[3].(string)
			// Rows come in (star_id, computed_in_run) order: the last
			// eligible one of a star is its verdict.
			m[id] = PrevStar{Status: st, InputHash: h, ComputedInRun: cin}
		}
	})
	if err != nil {
		return nil, fail(err)
	}
	return m, nil
}

func scanVerdict(sc scanner) (VerdictRow, error) {
	var (
		v                                       VerdictRow
		q, ih, dm, or, mn                       sql.NullString
		p16, p50, p84, lp50, rgc, vesc, pu, pul sql.NullFloat64
		pgc, gcc, ft                            sql.NullFloat64
		hasRV                                   int64
	)
	err := sc.Scan(&v.RunID, &v.StarID, &v.Status, &q, &v.ComputedInRun, &ih, &dm, &hasRV,
		&p16, &p50, &p84, &lp50, &rgc, &vesc, &pu, &pul, &or, &pgc, &gcc, &ft, &mn)
	if err != nil {
		return v, err
	}
	v.Quality, v.InputHash, v.DistanceMethod, v.Origin, v.ModelName = sv(q), sv(ih), sv(dm), sv(or), sv(mn)
	v.HasRV = hasRV == 1
	v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms, v.SpeedLowerP50Kms = fv(p16), fv(p50), fv(p84), fv(lp50)
	v.RGCKpc, v.VEscKms, v.PUnbound, v.PUnboundLower = fv(rgc), fv(vesc), fv(pu), fv(pul)
	v.PGCOrigin, v.GCConsistency, v.FlightTimeMyr = fv(pgc), fv(gcc), fv(ft)
	return v, nil
}

// ListFilter selects verdicts for List.
type ListFilter struct {
	Status string // "" = every status
	Run    int64  // 0 = latest complete run
	Limit  int    // 0 = no limit
}

// List calls fn for each verdict of a run matching f, ordered by star id.
// It returns the run used (useful when f.Run is 0).
func (l *Ledger) List(ctx context.Context, f ListFilter, fn func(VerdictRow) error) error {
	_, err := l.ListRun(ctx, f, fn)
	return err
}

// ListRun is List that also returns the run id it listed.
func (l *Ledger) ListRun(ctx context.Context, f ListFilter, fn func(VerdictRow) error) (int64, error) {
	runID := f.Run
	if runID == 0 {
		r, err := l.LastCompleteRun(ctx)
		if err != nil {
			return 0, err
		}
		if r == nil {
			return 0, fmt.Errorf("ledger %s: %w", l.path, ErrNoRuns)
		}
		runID = r.ID
	} else if _, err := l.Run(ctx, runID); err != nil {
		return 0, err
	}
	q := "SELECT " + verdictCols + " FROM verdicts WHERE run_id = ?"
	args := []any{runID}
	if f.Status != "" {
		q += " AND status = ?"
		args = append(args, f.Status)
	}
	q += " ORDER BY star_id"
	if f.Limit > 0 {
		q += " LIMIT ?"
		args = append(args, f.Limit)
	}
	rows, err := l.db.QueryContext(ctx, q, args...)
	if err != nil {
		return runID, fmt.Errorf("ledger %s run %d: list: %w", l.path, runID, err)
	}
	defer rows.Close()
	for rows.Next() {
		v, err := scanVerdict(rows)
		if err != nil {
			return runID, fmt.Errorf("ledger %s run %d: list: %w", l.path, runID, err)
		}
		if err := fn(v); err != nil {
			return runID, err
		}
	}
	if err := rows.Err(); err != nil {
		return runID, fmt.Errorf("ledger %s run %d: list: %w", l.path, runID, err)
	}
	return runID, nil
}

// RunCatalogs returns the input catalogs recorded for a run.
func (l *Ledger) RunCatalogs(ctx context.Context, runID int64) ([]CatalogRow, error) {
	rows, err := l.db.QueryContext(ctx,
		`SELECT name, release, file, file_sha256, rows_read, rows_kept, rows_quarantined, epoch, role
		 FROM catalogs WHERE run_id = ? ORDER BY name`, runID)
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: catalogs: %w", l.path, runID, err)
	}
	defer rows.Close()
	var out []CatalogRow
	for rows.Next() {
		var c CatalogRow
		var rel, file, sha, role sql.NullString
		var ep sql.NullFloat64
		if err := rows.Scan(&c.Name, &rel, &file, &sha, &c.RowsRead, &c.RowsKept, &c.RowsQuarantined, &ep, &role); err != nil {
			return nil, fmt.Errorf("ledger %s run %d: catalogs: %w", l.path, runID, err)
		}
		c.Release, c.File, c.FileSHA256, c.Role, c.Epoch = sv(rel), sv(file), sv(sha), sv(role), fv(ep)
		out = append(out, c)
	}
	return out, rows.Err()
}

// Quarantine calls fn for each quarantined row of a run, by catalog and line.
func (l *Ledger) Quarantine(ctx context.Context, runID int64, fn func(QuarantineRow) error) error {
	rows, err := l.db.QueryContext(ctx,
		`SELECT catalog, line, "column", column_name, value, reason FROM quarantine
		 WHERE run_id = ? ORDER BY catalog, line, "column"`, runID)
	if err != nil {
		return fmt.Errorf("ledger %s run %d: quarantine: %w", l.path, runID, err)
	}
	defer rows.Close()
	for rows.Next() {
		var q QuarantineRow
		var col sql.NullInt64
		var name, val sql.NullString
		if err := rows.Scan(&q.Catalog, &q.Line, &col, &name, &val, &q.Reason); err != nil {
			return fmt.Errorf("ledger %s run %d: quarantine: %w", l.path, runID, err)
		}
		q.Column, q.ColumnName, q.Value = int(col.Int64), sv(name), sv(val)
		if err := fn(q); err != nil {
			return err
		}
	}
	return rows.Err()
}

// sameValue treats two missing values as equal.
func sameValue(a, b float64) bool {
	return a == b || (math.IsNaN(a) && math.IsNaN(b))
}

// Crossings calls fn for the plane crossings of every star of a run, taken
// from each star's computing run, ordered by star id.
func (l *Ledger) Crossings(ctx context.Context, runID int64, fn func(CrossingRow) error) error {
	rows, err := l.db.QueryContext(ctx,
		`SELECT v.star_id, c.x_kpc, c.y_kpc, c.t_myr FROM verdicts v
		 JOIN crossings c ON c.run_id = v.computed_in_run AND c.star_id = v.star_id
		 WHERE v.run_id = ? ORDER BY v.star_id, c.rowid`, runID)
	if err != nil {
		return fmt.Errorf("ledger %s run %d: crossings: %w", l.path, runID, err)
	}
	defer rows.Close()
	for rows.Next() {
		var c CrossingRow
		if err := rows.Scan(&c.StarID, &c.XKpc, &c.YKpc, &c.TMyr); err != nil {
			return fmt.Errorf("ledger %s run %d: crossings: %w", l.path, runID, err)
		}
		if err := fn(c); err != nil {
			return err
		}
	}
	return rows.Err()
}

// Positions calls fn with the ICRS position (deg, catalog epoch) of every
// star of a run that has inputs in its computing run, ordered by star id.
// Missing coordinates are NaN.
func (l *Ledger) Positions(ctx context.Context, runID int64, fn func(starID string, raDeg, decDeg float64) error) error {
	rows, err := l.db.QueryContext(ctx,
		`SELECT v.star_id, i.ra, i.dec FROM verdicts v
		 JOIN inputs i ON i.run_id = v.computed_in_run AND i.star_id = v.star_id
		 WHERE v.run_id = ? ORDER BY v.star_id`, runID)
	if err != nil {
		return fmt.Errorf("ledger %s run %d: positions: %w", l.path, runID, err)
	}
	defer rows.Close()
	for rows.Next() {
		var id string
		var ra, dec sql.NullFloat64
		if err := rows.Scan(&id, &ra, &dec); err != nil {
			return fmt.Errorf("ledger %s run %d: positions: %w", l.path, runID, err)
		}
		if err := fn(id, fv(ra), fv(dec)); err != nil {
			return err
		}
	}
	return rows.Err()
}
