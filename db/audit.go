package db

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// StarRun is a star's verdict in one run.
type StarRun struct {
	RunState string // state of the run (failed for an interrupted one)
	Verdict  VerdictRow
}

// FieldChange is one input field that differs between two computations.
type FieldChange struct {
	Name string
	Unit string
	Old  float64 // NaN = missing
	New  float64
}

// Computation is what one computing run saw and concluded for the star.
type Computation struct {
	RunID   int64
	Inputs  *InputRow // nil if the run wrote no inputs (e.g. withdrawn)
	Changes []FieldChange
	// DupCountChange is set when dup_count differs from the previous
	// computation: [old, new].
	DupCountChange *[2]int
	Verdict        VerdictRow
	Reasons        []ReasonRow
	Matches        []MatchRow
}

// StarHistory is everything the ledger knows about one star.
type StarHistory struct {
	StarID        string
	FirstRun      int64
	LastRun       int64
	CurrentRun    int64  // latest complete run (0 if none)
	CurrentStatus string // status in CurrentRun; "" if absent there
	Runs          []StarRun
	Computations  []Computation
}

// Why returns a star's history; an id never written is ErrUnknownStar.
func (l *Ledger) Why(ctx context.Context, starID string) (*StarHistory, error) {
	h := &StarHistory{StarID: starID}
	err := l.db.QueryRowContext(ctx, "SELECT first_run, last_run FROM stars WHERE star_id = ?", starID).
		Scan(&h.FirstRun, &h.LastRun)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, fmt.Errorf("ledger %s has no star %q: %w", l.path, starID, ErrUnknownStar)
	}
	if err != nil {
		return nil, fmt.Errorf("ledger %s: star %q: %w", l.path, starID, err)
	}
	if err := l.starRuns(ctx, h); err != nil {
		return nil, err
	}
	if err := l.starComputations(ctx, h); err != nil {
		return nil, err
	}
	return h, nil
}

// starRuns fills h's CurrentRun, Runs and CurrentStatus: the star's
// verdict in every run, with the run's state.
func (l *Ledger) starRuns(ctx context.Context, h *StarHistory) error {
	starID := h.StarID
	runs, err := l.Runs(ctx)
	if err != nil {
		return err
	}
	state := map[int64]string{}
	for _, r := range runs {
		state[r.ID] = r.State
		if r.State == "complete" {
			h.CurrentRun = r.ID
		}
	}
	// One primary-key probe per run: cheaper to keep than an index on
	// star_id, which every run would have to update in random order.
	rows, err := l.db.QueryContext(ctx, "SELECT "+verdictCols+
		" FROM verdicts WHERE run_id IN (SELECT id FROM runs) AND star_id = ? ORDER BY run_id", starID)
	if err != nil {
		return fmt.Errorf("ledger %s: star %q verdicts: %w", l.path, starID, err)
	}
	for rows.Next() {
		v, err := scanVerdict(rows)
		if err != nil {
			rows.Close()
			return fmt.Errorf("ledger %s: star %q verdicts: %w", l.path, starID, err)
		}
		h.Runs = append(h.Runs, StarRun{RunState: state[v.RunID], Verdict: v})
		if v.RunID == h.CurrentRun {
			h.CurrentStatus = v.Status
		}
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return fmt.Errorf("ledger %s: star %q verdicts: %w", l.path, starID, err)
	}
	return nil
}

// starComputations fills h.Computations from h.Runs: each run that
// computed the star, in run order, with its inputs, reasons, matches and
// the input changes since the previous computation.
func (l *Ledger) starComputations(ctx context.Context, h *StarHistory) error {
	starID := h.StarID
	seen := map[int64]bool{}
	var comps []int64
	own := map[int64]VerdictRow{}
	for _, r := range h.Runs {
		c := r.Verdict.ComputedInRun
		if !seen[c] {
			seen[c] = true
			comps = append(comps, c)
		}
		if !r.Verdict.Carried() {
			own[r.Verdict.RunID] = r.Verdict
		}
	}
	sort.Slice(comps, func(i, j int) bool { return comps[i] < comps[j] })
	var prev *InputRow
	for _, c := range comps {
		comp := Computation{RunID: c, Verdict: own[c]}
		var err error
		if comp.Inputs, err = l.inputsOf(ctx, c, starID); err != nil {
			return err
		}
		if comp.Reasons, err = l.reasonsOf(ctx, c, starID); err != nil {
			return err
		}
		if comp.Matches, err = l.matchesOf(ctx, c, starID); err != nil {
			return err
		}
		if prev != nil && comp.Inputs != nil {
			comp.inputChanges(prev)
		}
		if comp.Inputs != nil {
			prev = comp.Inputs
		}
		h.Computations = append(h.Computations, comp)
	}
	return nil
}

// inputChanges sets comp's Changes and DupCountChange against the inputs
// of the previous computation.
func (comp *Computation) inputChanges(prev *InputRow) {
	for i := range NumInputs {
		if !sameValue(prev.Values[i], comp.Inputs.Values[i]) {
			comp.Changes = append(comp.Changes, FieldChange{InputName(i), InputUnit(i), prev.Values[i], comp.Inputs.Values[i]})
		}
	}
	if prev.DupCount != comp.Inputs.DupCount {
		comp.DupCountChange = &[2]int{prev.DupCount, comp.Inputs.DupCount}
	}
}

func (l *Ledger) inputsOf(ctx context.Context, runID int64, starID string) (*InputRow, error) {
	var in InputRow
	var vals [NumInputs]sql.NullFloat64
	dest := []any{&in.InputHash}
	for i := range vals {
		dest = append(dest, &vals[i])
	}
	dest = append(dest, &in.DupCount)
	err := l.db.QueryRowContext(ctx, "SELECT input_hash, "+inputCols+", dup_count FROM computed_verdicts "+
		"WHERE star_id = ? AND computed_in_run = ? AND dup_count IS NOT NULL", starID, runID).Scan(dest...)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: star %q inputs: %w", l.path, runID, starID, err)
	}
	for i, v := range vals {
		in.Values[i] = fv(v)
	}
	return &in, nil
}

// Reasons returns the stored reasons of a star in the run that computed it.
func (l *Ledger) Reasons(ctx context.Context, runID int64, starID string) ([]ReasonRow, error) {
	return l.reasonsOf(ctx, runID, starID)
}

// reasonsOf reads a star's reasons as the reasons view gives them: from
// its verdict's reason_list and the run's forms since schema 10, else from
// the rows an earlier run stored.
func (l *Ledger) reasonsOf(ctx context.Context, runID int64, starID string) ([]ReasonRow, error) {
	bad := func(err error) error {
		return fmt.Errorf("ledger %s run %d: star %q reasons: %w", l.path, runID, starID, err)
	}
	var list sql.NullString
	err := l.db.QueryRowContext(ctx, "SELECT reason_list FROM computed_verdicts WHERE star_id = ? AND computed_in_run = ?",
		starID, runID).Scan(&list)
	if err != nil && !errors.Is(err, sql.ErrNoRows) {
		return nil, bad(err)
	}
	if list.Valid {
		out, err := l.decodeReasons(ctx, runID, list.String)
		if err != nil {
			return nil, bad(err)
		}
		return out, nil
	}
	rows, err := l.db.QueryContext(ctx,
		`SELECT rule_id, outcome, severity, value, threshold, message FROM reasons
		 WHERE run_id = ? AND star_id = ? ORDER BY seq`, runID, starID)
	if err != nil {
		return nil, bad(err)
	}
	defer rows.Close()
	var out []ReasonRow
	for rows.Next() {
		var r ReasonRow
		var sev, thr, msg sql.NullString
		var val sql.NullFloat64
		if err := rows.Scan(&r.RuleID, &r.Outcome, &sev, &val, &thr, &msg); err != nil {
			return nil, bad(err)
		}
		r.Severity, r.Value, r.Threshold, r.Message = sv(sev), fv(val), sv(thr), sv(msg)
		out = append(out, r)
	}
	if err := rows.Err(); err != nil {
		return nil, bad(err)
	}
	return out, nil
}

// decodeReasons reads a reason_list (appendReason) against the run's
// forms, as the reasons view does in SQL.
func (l *Ledger) decodeReasons(ctx context.Context, runID int64, list string) ([]ReasonRow, error) {
	dec := json.NewDecoder(strings.NewReader(list))
	dec.UseNumber()
	var entries [][]any
	if err := dec.Decode(&entries); err != nil {
		return nil, fmt.Errorf("reason_list %q: %w", list, err)
	}
	out := make([]ReasonRow, len(entries))
	for k, e := range entries {
		if len(e) == 0 {
			return nil, fmt.Errorf("reason_list %q: entry %d is empty", list, k)
		}
		n, _ := e[0].(json.Number)
		id, err := n.Int64()
		if err != nil {
			return nil, fmt.Errorf("reason_list %q: entry %d: form %v", list, k, e[0])
		}
		f, err := l.form(ctx, runID, id)
		if err != nil {
			return nil, err
		}
		r := ReasonRow{RuleID: f.ruleID, Outcome: f.outcome, Severity: f.severity, Threshold: f.threshold,
			Message: f.message, Value: math.NaN()}
		if len(e) > 1 && e[1] != nil {
			v, _ := e[1].(json.Number)
			x, err := strconv.ParseFloat(string(v), 64)
			if err != nil && !(errors.Is(err, strconv.ErrRange) && math.IsInf(x, 0)) {
				return nil, fmt.Errorf("reason_list %q: entry %d: value %v", list, k, e[1])
			}
			r.Value = x
		}
		if len(e) > 2 {
			r.Message, _ = e[2].(string)
		}
		out[k] = r
	}
	return out, nil
}

// form returns a run's reason form, from the cache or read again when the
// run has added forms since.
func (l *Ledger) form(ctx context.Context, runID, id int64) (form, error) {
	l.formsMu.Lock()
	defer l.formsMu.Unlock()
	if fs := l.forms[runID]; id >= 0 && id < int64(len(fs)) {
		return fs[id], nil
	}
	rows, err := l.db.QueryContext(ctx,
		"SELECT form_id, rule_id, outcome, severity, threshold, message FROM reason_forms WHERE run_id = ? ORDER BY form_id", runID)
	if err != nil {
		return form{}, err
	}
	defer rows.Close()
	var fs []form
	for rows.Next() {
		var f form
		var sev, thr, msg sql.NullString
		if err := rows.Scan(&f.id, &f.ruleID, &f.outcome, &sev, &thr, &msg); err != nil {
			return form{}, err
		}
		if f.id != int64(len(fs)) {
			return form{}, fmt.Errorf("reason_forms of run %d: form %d where %d was expected", runID, f.id, len(fs))
		}
		f.severity, f.threshold, f.message = sv(sev), sv(thr), sv(msg)
		fs = append(fs, f)
	}
	if err := rows.Err(); err != nil {
		return form{}, err
	}
	if l.forms == nil {
		l.forms = map[int64][]form{}
	}
	l.forms[runID] = fs
	if id < 0 || id >= int64(len(fs)) {
		return form{}, fmt.Errorf("run %d has no reason form %d", runID, id)
	}
	return fs[id], nil
}

func (l *Ledger) matchesOf(ctx context.Context, runID int64, starID string) ([]MatchRow, error) {
	rows, err := l.db.QueryContext(ctx,
		`SELECT catalog, counterpart_id, sep_arcsec, match_prob, candidates, ambiguous FROM matches
		 WHERE run_id = ? AND star_id = ? ORDER BY catalog`, runID, starID)
	if err != nil {
		return nil, fmt.Errorf("ledger %s run %d: star %q matches: %w", l.path, runID, starID, err)
	}
	defer rows.Close()
	var out []MatchRow
	for rows.Next() {
		var m MatchRow
		var src sql.NullString
		var sep, p sql.NullFloat64
		var amb int64
		if err := rows.Scan(&m.Catalog, &src, &sep, &p, &m.Candidates, &amb); err != nil {
			return nil, fmt.Errorf("ledger %s run %d: star %q matches: %w", l.path, runID, starID, err)
		}
		m.CounterpartID, m.SepArcsec, m.MatchProb, m.Ambiguous = sv(src), fv(sep), fv(p), amb == 1
		out = append(out, m)
	}
	return out, rows.Err()
}

// NoStatus stands for "no verdict in that run" in a transition.
const NoStatus = "(none)"

// Transition counts stars that went From -> To.
type Transition struct {
	From, To string
	Count    int64
}

// StarChange is one star whose status differs between the two runs.
type StarChange struct {
	StarID   string
	From, To string
}

// DiffResult compares two runs.
type DiffResult struct {
	RunA, RunB  int64
	Unchanged   int64        // stars with the same status in both
	Transitions []Transition // status changes, largest count first
	Changed     int64        // total stars in Transitions
	Stars       []StarChange // by star id; capped by DiffN's limit
}

// Diff compares runA with runB (0, 0 = the last two complete runs; a zero
// runB = the latest complete run) and lists every changed star.
func (l *Ledger) Diff(ctx context.Context, runA, runB int64) (*DiffResult, error) {
	return l.DiffN(ctx, runA, runB, -1)
}

// DiffN is Diff keeping at most limit per-star lines (limit < 0: all).
func (l *Ledger) DiffN(ctx context.Context, runA, runB int64, limit int) (*DiffResult, error) {
	runA, runB, err := l.diffRuns(ctx, runA, runB)
	if err != nil {
		return nil, err
	}
	d := &DiffResult{RunA: runA, RunB: runB}
	counts := map[statusPair]int64{}
	err = l.scanSets(ctx, []int64{runA, runB}, []string{"status"}, func(id string, g [][]driver.Value, pick []int) error {
		p := statusPair{NoStatus, NoStatus}
		if pick[0] >= 0 {
			p.from, _ = g[pick[0]][2].(string)
		}
		if pick[1] >= 0 {
			p.to, _ = g[pick[1]][2].(string)
		}
		if pick[0] < 0 && pick[1] < 0 {
			return nil
		}
		counts[p]++
		if p.from != p.to && (limit < 0 || len(d.Stars) < limit) {
			d.Stars = append(d.Stars, StarChange{StarID: id, From: p.from, To: p.to})
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("ledger %s: diff %d %d: %w", l.path, runA, runB, err)
	}
	d.addTransitions(counts)
	return d, nil
}

// diffRuns resolves DiffN's run ids (0: the last complete runs) and checks
// that both runs exist.
func (l *Ledger) diffRuns(ctx context.Context, runA, runB int64) (int64, int64, error) {
	if runB == 0 {
		ids, err := l.completeRuns(ctx, 2)
		if err != nil {
			return 0, 0, fmt.Errorf("ledger %s: diff: %w", l.path, err)
		}
		switch {
		case runA == 0 && len(ids) < 2:
			return 0, 0, fmt.Errorf("ledger %s: diff needs two complete runs, it has %d: %w", l.path, len(ids), ErrNoRuns)
		case runA == 0:
			runA, runB = ids[1], ids[0]
		case len(ids) == 0:
			return 0, 0, fmt.Errorf("ledger %s: %w", l.path, ErrNoRuns)
		default:
			runB = ids[0]
		}
	}
	for _, id := range []int64{runA, runB} {
		if _, err := l.Run(ctx, id); err != nil {
			return 0, 0, err
		}
	}
	return runA, runB, nil
}

// statusPair is a star's status in the two runs of a diff.
type statusPair struct{ from, to string }

// addTransitions sums counts into d's Unchanged and Changed and lists the
// transitions, most frequent first.
func (d *DiffResult) addTransitions(counts map[statusPair]int64) {
	for p, n := range counts {
		if p.from == p.to {
			d.Unchanged += n
			continue
		}
		d.Changed += n
		d.Transitions = append(d.Transitions, Transition{From: p.from, To: p.to, Count: n})
	}
	sort.Slice(d.Transitions, func(i, j int) bool {
		a, b := d.Transitions[i], d.Transitions[j]
		if a.Count != b.Count {
			return a.Count > b.Count
		}
		if a.From != b.From {
			return a.From < b.From
		}
		return a.To < b.To
	})
}
