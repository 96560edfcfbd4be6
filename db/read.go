package db

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
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

// statusCounts counts run runID's set by status, in one pass (scanSets).
func (l *Ledger) statusCounts(ctx context.Context, runID int64) (map[string]int64, error) {
	m := map[string]int64{}
	err := l.scanSets(ctx, []int64{runID}, []string{"status"}, func(_ string, g [][]driver.Value, pick []int) error {
		if pick[0] >= 0 {
			s, _ := g[pick[0]][2].(string)
			m[s]++
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: status counts: %w", l.path, runID, err)
	}
	return m, nil
}

// probeLimit is how many computed stars Finish has countsAfter probe one
// by one; above it one pass over the whole set is cheaper.
const probeLimit = 100_000

// countsAfter returns the status counts of run runID's set, as if it were
// complete, and how many verdicts it computed. For a run that computed few
// stars the counts are those of the last complete run before it (as its
// Finish stored them) with one probe per computed star, which adds its new
// status and takes away its old one; otherwise one pass over the set.
func (l *Ledger) countsAfter(ctx context.Context, runID int64, probeLimit int64) (map[string]int64, int64, error) {
	ownCounts, computed, err := l.computedCounts(ctx, runID)
	if err != nil {
		return nil, 0, err
	}
	counts := map[string]int64{}
	var prev sql.NullInt64
	var cj sql.NullString
	err = l.db.QueryRowContext(ctx,
		"SELECT id, counts_json FROM runs WHERE id < ? AND state = 'complete' ORDER BY id DESC LIMIT 1", runID).Scan(&prev, &cj)
	switch {
	case errors.Is(err, sql.ErrNoRows):
		return ownCounts, computed, nil
	case err != nil:
		return nil, 0, err
	case computed > probeLimit || !cj.Valid:
		counts, err := l.statusCounts(ctx, runID)
		return counts, computed, err
	}
	if err := json.Unmarshal([]byte(cj.String), &counts); err != nil {
		return nil, 0, fmt.Errorf("run %d counts_json: %w", prev.Int64, err)
	}
	probed, err := l.probeChanges(ctx, runID, counts)
	if err != nil {
		return nil, 0, err
	}
	if probed != computed {
		return nil, 0, fmt.Errorf("run %d: %d computed verdicts by status, %d probed", runID, computed, probed)
	}
	for k, n := range counts {
		if n < 0 {
			return nil, 0, fmt.Errorf("%d stars %q after run %d: the previous run's counts disagree with its verdicts: %w", n, k, runID, ErrSummary)
		}
	}
	return nonZero(counts), computed, nil
}

// computedCounts counts the verdicts run runID computed, by status and in
// all.
func (l *Ledger) computedCounts(ctx context.Context, runID int64) (map[string]int64, int64, error) {
	own, err := l.db.QueryContext(ctx,
		"SELECT status, count(*) FROM computed_verdicts WHERE computed_in_run = ? GROUP BY status", runID)
	if err != nil {
		return nil, 0, err
	}
	ownCounts := map[string]int64{}
	var computed int64
	for own.Next() {
		var s string
		var n int64
		if err := own.Scan(&s, &n); err != nil {
			own.Close()
			return nil, 0, err
		}
		ownCounts[s] = n
		computed += n
	}
	own.Close()
	if err := own.Err(); err != nil {
		return nil, 0, err
	}
	return ownCounts, computed, nil
}

// probeChanges moves each star run runID computed, in counts, from its
// status in the last complete run before (if any) to its new one, and
// returns how many stars it probed.
func (l *Ledger) probeChanges(ctx context.Context, runID int64, counts map[string]int64) (int64, error) {
	rows, err := l.db.QueryContext(ctx, `SELECT v.status, (
			SELECT p.status FROM computed_verdicts p JOIN runs c ON c.id = p.computed_in_run
			 WHERE p.star_id = v.star_id AND p.computed_in_run < ?1 AND c.state = 'complete'
			 ORDER BY p.computed_in_run DESC LIMIT 1)
		  FROM computed_verdicts v WHERE v.computed_in_run = ?1`, runID)
	if err != nil {
		return 0, err
	}
	defer rows.Close()
	var probed int64
	for rows.Next() {
		var now string
		var before sql.NullString
		if err := rows.Scan(&now, &before); err != nil {
			return 0, err
		}
		probed++
		counts[now]++
		if before.Valid {
			counts[before.String]--
		}
	}
	return probed, rows.Err()
}

// PreviousState returns status, input hash and computing run of every star
// of run runID's set, in star id order, from one pass over
// computed_verdicts.
func (l *Ledger) PreviousState(ctx context.Context, runID int64) (*PrevSet, error) {
	r, err := l.Run(ctx, runID)
	if err != nil {
		return nil, err
	}
	n := max(r.StarsTotal, 0)
	p := &PrevSet{IDs: make([]string, 0, n), Stars: make([]PrevStar, 0, n)}
	statuses := map[string]string{} // one string per status word
	err = l.scanSets(ctx, []int64{runID}, []string{"status", "input_hash"}, func(id string, g [][]driver.Value, pick []int) error {
		if pick[0] < 0 {
			return nil
		}
		row := g[pick[0]]
		cin, _ := row[1].(int64)
		st, _ := row[2].(string)
		if s, ok := statuses[st]; ok {
			st = s
		} else {
			statuses[st] = st
		}
		h, _ := row[3].(string)
		p.IDs = append(p.IDs, id)
		p.Stars = append(p.Stars, PrevStar{Status: st, InputHash: h, ComputedInRun: cin})
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: previous state: %w", l.path, runID, err)
	}
	return p, nil
}

func scanVerdict(sc scanner) (VerdictRow, error) {
	var (
		v                                       VerdictRow
		q, ih, dm, or, mn                       sql.NullString
		p16, p50, p84, lp50, rgc, vesc, pu, pul sql.NullFloat64
		pgc, gcc, ft, d16, d50, d84, puf        sql.NullFloat64
		hasRV                                   int64
		used, traced, crossed                   sql.NullInt64
	)
	err := sc.Scan(&v.RunID, &v.StarID, &v.Status, &q, &v.ComputedInRun, &ih, &dm, &hasRV,
		&p16, &p50, &p84, &lp50, &rgc, &vesc, &pu, &pul, &or, &pgc, &gcc, &ft, &mn,
		&used, &d16, &d50, &d84, &puf, &traced, &crossed)
	if err != nil {
		return v, err
	}
	v.SamplesUsed, v.TraceSamples, v.TraceCrossed = int(used.Int64), int(traced.Int64), int(crossed.Int64)
	v.DistP16Kpc, v.DistP50Kpc, v.DistP84Kpc, v.PUnboundFlat = fv(d16), fv(d50), fv(d84), fv(puf)
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
	n := 0
	stop := errors.New("limit reached")
	err := l.scanSets(ctx, []int64{runID}, strings.Split(computedCols, ", ")[2:], func(id string, g [][]driver.Value, pick []int) error {
		if pick[0] < 0 {
			return nil
		}
		v := verdictOf(runID, g[pick[0]])
		if f.Status != "" && v.Status != f.Status {
			return nil
		}
		if err := fn(v); err != nil {
			return err
		}
		if n++; f.Limit > 0 && n >= f.Limit {
			return stop
		}
		return nil
	})
	if err == stop {
		err = nil
	}
	if err != nil {
		return runID, fmt.Errorf("ledger %s run %d: list: %w", l.path, runID, err)
	}
	return runID, nil
}

// verdictOf decodes one computed_verdicts row read by scanSets with
// computedCols as the verdict of run runID.
func verdictOf(runID int64, r []driver.Value) VerdictRow {
	str := func(x driver.Value) string { s, _ := x.(string); return s }
	num := func(x driver.Value) float64 {
		switch y := x.(type) {
		case float64:
			return y
		case int64:
			return float64(y)
		}
		return math.NaN()
	}
	count := func(x driver.Value) int { n, _ := x.(int64); return int(n) }
	cin, _ := r[1].(int64)
	hasRV, _ := r[6].(int64)
	return VerdictRow{RunID: runID, StarID: str(r[0]), ComputedInRun: cin, Status: str(r[2]), Quality: str(r[3]),
		InputHash: str(r[4]), DistanceMethod: str(r[5]), HasRV: hasRV == 1,
		SpeedP16Kms: num(r[7]), SpeedP50Kms: num(r[8]), SpeedP84Kms: num(r[9]), SpeedLowerP50Kms: num(r[10]),
		RGCKpc: num(r[11]), VEscKms: num(r[12]), PUnbound: num(r[13]), PUnboundLower: num(r[14]),
		Origin: str(r[15]), PGCOrigin: num(r[16]), GCConsistency: num(r[17]), FlightTimeMyr: num(r[18]),
		ModelName: str(r[19]), SamplesUsed: count(r[20]), DistP16Kpc: num(r[21]), DistP50Kpc: num(r[22]),
		DistP84Kpc: num(r[23]), PUnboundFlat: num(r[24]), TraceSamples: count(r[25]), TraceCrossed: count(r[26])}
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
