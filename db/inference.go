package db

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
)

// Inference is one weighing of the Galaxy from a run's stars (starvet
// weigh): its settings, every method's results, and every star it
// considered. Excluded counts the stars of the run that were not
// considered at all, by reason (no radial velocity, rejected by the cuts,
// ...).
type Inference struct {
	ID           int64 // set by AddInference and readers
	RunID        int64
	MadeAt       string // set by readers
	ToolVersion  string
	ModelHash    string
	SettingsJSON string
	ExcludedJSON string
	Curves       *InferenceCurves // for plots; nil for none
	Results      []InferenceResult
	Stars        []InferenceStar
}

// InferenceCurves are what the report plots of an inference: the tail
// sample's median speeds with the fitted model, the posterior of the
// escape speed at the Sun on its grid with the M200 each node maps to, and
// the orbit method's log-likelihood against M200. Stored as JSON.
type InferenceCurves struct {
	VMinKms       float64   `json:"vmin_kms,omitempty"`
	KMedian       float64   `json:"k_median,omitempty"`
	TailSpeedsKms []float64 `json:"tail_speeds_kms,omitempty"`
	VEscGridKms   []float64 `json:"vesc_grid_kms,omitempty"`
	VEscPosterior []float64 `json:"vesc_posterior,omitempty"`
	M200GridMsun  []float64 `json:"m200_grid_msun,omitempty"` // per VEscGridKms node; 0 where not computed
	OrbitM200Msun []float64 `json:"orbit_m200_msun,omitempty"`
	OrbitLogLike  []float64 `json:"orbit_loglike,omitempty"`
}

// InferenceResult is one parameter a method estimated: its median and
// its 68 and 90 per cent intervals, from Stars stars.
type InferenceResult struct {
	Method, Parameter  string
	Median, Lo68, Hi68 float64
	Lo90, Hi90         float64
	Stars              int
	Note               string
}

// InferenceStar says whether a star entered a method and why (not).
type InferenceStar struct {
	Method, StarID string
	Used           bool
	Reason         string
}

// AddInference stores inf under the writer lock, in one transaction, and
// returns its id.
func (l *Ledger) AddInference(ctx context.Context, inf Inference) (int64, error) {
	if l.opt.ReadOnly {
		return 0, fmt.Errorf("ledger %s is open read-only; cannot store an inference", l.path)
	}
	lk, err := waitLock(ctx, l.lockPath(), l.opt.LockWait)
	if err != nil {
		return 0, fmt.Errorf("ledger %s: %w", l.path, err)
	}
	if lk == nil {
		return 0, fmt.Errorf("ledger %s is busy: a run is writing it (waited %s): %w", l.path, l.opt.LockWait, ErrBusy)
	}
	defer lk.release()
	var curves any
	if inf.Curves != nil {
		b, err := json.Marshal(inf.Curves)
		if err != nil {
			return 0, err
		}
		curves = string(b)
	}
	var id int64
	err = l.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `INSERT INTO inferences (run_id, made_at, tool_version, model_hash, settings_json, excluded_json, curves_json)
			VALUES (?, ?, ?, ?, ?, ?, ?)`, inf.RunID, l.stamp(), inf.ToolVersion, inf.ModelHash, inf.SettingsJSON, inf.ExcludedJSON, curves)
		if err != nil {
			return err
		}
		if id, err = res.LastInsertId(); err != nil {
			return err
		}
		for _, r := range inf.Results {
			if _, err := tx.ExecContext(ctx, `INSERT INTO inference_results (inference_id, method, parameter, median, lo68, hi68, lo90, hi90, stars, note)
				VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`, id, r.Method, r.Parameter, nf(r.Median), nf(r.Lo68), nf(r.Hi68), nf(r.Lo90), nf(r.Hi90), r.Stars, ns(r.Note)); err != nil {
				return fmt.Errorf("%s %s: %w", r.Method, r.Parameter, err)
			}
		}
		st, err := tx.PrepareContext(ctx, `INSERT INTO inference_stars (inference_id, method, star_id, used, reason) VALUES (?, ?, ?, ?, ?)`)
		if err != nil {
			return err
		}
		defer st.Close()
		for _, s := range inf.Stars {
			if _, err := st.ExecContext(ctx, id, s.Method, s.StarID, b2i(s.Used), s.Reason); err != nil {
				return fmt.Errorf("star %s: %w", s.StarID, err)
			}
		}
		return nil
	})
	if err != nil {
		return 0, fmt.Errorf("ledger %s: store inference: %w", l.path, err)
	}
	return id, nil
}

// LastInference returns the latest inference made from run runID, with
// its results and curves but not its stars, or nil when there is none.
func (l *Ledger) LastInference(ctx context.Context, runID int64) (*Inference, error) {
	inf := Inference{RunID: runID}
	var curves sql.NullString
	err := l.db.QueryRowContext(ctx, `SELECT id, made_at, tool_version, model_hash, settings_json, excluded_json, curves_json
		FROM inferences WHERE run_id = ? ORDER BY id DESC LIMIT 1`, runID).Scan(&inf.ID, &inf.MadeAt, &inf.ToolVersion,
		&inf.ModelHash, &inf.SettingsJSON, &inf.ExcludedJSON, &curves)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: last inference: %w", l.path, runID, err)
	}
	if curves.Valid {
		inf.Curves = &InferenceCurves{}
		if err := json.Unmarshal([]byte(curves.String), inf.Curves); err != nil {
			return nil, fmt.Errorf("ledger %s inference %d: curves: %w", l.path, inf.ID, err)
		}
	}
	rows, err := l.db.QueryContext(ctx, `SELECT method, parameter, median, lo68, hi68, lo90, hi90, stars, note
		FROM inference_results WHERE inference_id = ? ORDER BY method, parameter`, inf.ID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var r InferenceResult
		var m, a, b, c, d sql.NullFloat64
		var note sql.NullString
		if err := rows.Scan(&r.Method, &r.Parameter, &m, &a, &b, &c, &d, &r.Stars, &note); err != nil {
			return nil, err
		}
		r.Median, r.Lo68, r.Hi68, r.Lo90, r.Hi90, r.Note = fv(m), fv(a), fv(b), fv(c), fv(d), note.String
		inf.Results = append(inf.Results, r)
	}
	return &inf, rows.Err()
}

// StarInferences returns what every inference said about one star.
func (l *Ledger) StarInferences(ctx context.Context, starID string) ([]InferenceStar, []int64, error) {
	rows, err := l.db.QueryContext(ctx, `SELECT inference_id, method, used, reason FROM inference_stars WHERE star_id = ? ORDER BY inference_id, method`, starID)
	if err != nil {
		return nil, nil, fmt.Errorf("ledger %s: inferences of %s: %w", l.path, starID, err)
	}
	defer rows.Close()
	var out []InferenceStar
	var ids []int64
	for rows.Next() {
		s := InferenceStar{StarID: starID}
		var id, used int64
		if err := rows.Scan(&id, &s.Method, &used, &s.Reason); err != nil {
			return nil, nil, err
		}
		s.Used = used == 1
		out, ids = append(out, s), append(ids, id)
	}
	return out, ids, rows.Err()
}

// KinematicCandidate is what a weighing needs of a star of a run: its
// verdict, its stored inputs and the rules it failed.
type KinematicCandidate struct {
	Verdict VerdictRow
	Inputs  InputRow
	Failed  []string // rule ids with outcome fail
}

// KinematicCandidates calls fn for every star of run runID's set that
// passed the cuts (quality pass or flag) with a radial velocity and a
// median Galactocentric speed of at least minSpeedKms, in star id order,
// and returns how many stars of the set it passed over, by reason.
func (l *Ledger) KinematicCandidates(ctx context.Context, runID int64, minSpeedKms float64, fn func(KinematicCandidate) error) (map[string]int64, error) {
	skipped := map[string]int64{}
	rows, err := l.db.QueryContext(ctx, `SELECT CASE
			WHEN status = 'withdrawn' THEN 'withdrawn'
			WHEN quality IS NULL OR quality = 'reject' THEN 'rejected by the cuts'
			WHEN has_rv = 0 THEN 'no radial velocity'
			WHEN speed_p50_kms IS NULL THEN 'no Galactocentric speed'
			ELSE 'median speed below the minimum' END, count(*)
		FROM verdicts WHERE run_id = ? AND NOT (status <> 'withdrawn' AND quality IN ('pass', 'flag') AND has_rv = 1 AND speed_p50_kms >= ?)
		GROUP BY 1`, runID, minSpeedKms)
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: candidates: %w", l.path, runID, err)
	}
	for rows.Next() {
		var why string
		var n int64
		if err := rows.Scan(&why, &n); err != nil {
			rows.Close()
			return nil, err
		}
		skipped[why] = n
	}
	rows.Close()
	rows, err = l.db.QueryContext(ctx, `SELECT `+verdictCols+` FROM verdicts
		WHERE run_id = ? AND status <> 'withdrawn' AND quality IN ('pass', 'flag') AND has_rv = 1 AND speed_p50_kms >= ?
		ORDER BY star_id`, runID, minSpeedKms)
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: candidates: %w", l.path, runID, err)
	}
	var cands []KinematicCandidate
	for rows.Next() {
		v, err := scanVerdict(rows)
		if err != nil {
			rows.Close()
			return nil, err
		}
		cands = append(cands, KinematicCandidate{Verdict: v})
	}
	rows.Close()
	for k := range cands {
		c := &cands[k]
		in, err := l.inputsOf(ctx, c.Verdict.ComputedInRun, c.Verdict.StarID)
		if err != nil {
			return nil, err
		}
		if in == nil {
			return nil, fmt.Errorf("ledger %s run %d: star %s has a verdict but no inputs", l.path, runID, c.Verdict.StarID)
		}
		c.Inputs = *in
		reasons, err := l.reasonsOf(ctx, c.Verdict.ComputedInRun, c.Verdict.StarID)
		if err != nil {
			return nil, err
		}
		for _, r := range reasons {
			if r.Outcome == "fail" {
				c.Failed = append(c.Failed, r.RuleID)
			}
		}
		if err := fn(*c); err != nil {
			return nil, err
		}
	}
	return skipped, nil
}
