package db

import (
	"context"
	"database/sql"
	"fmt"
	"strconv"
	"strings"

	sqlite3 "github.com/mattn/go-sqlite3"
)

// TileRun is one tile ledger's run that a gathered run took stars from.
type TileRun struct {
	Tile    string // the tile's name in its split plan
	Ledger  string // path of the tile's ledger
	TileRun int64  // the run of the tile ledger gathered
}

// shiftFormsFunc is the SQL function CopyComputed rewrites reason lists
// with.
const shiftFormsFunc = "starvet_shift_forms"

// CopyComputed copies into this run the stars ids as run srcRun of the
// ledger at srcPath computed them: their computed_verdicts rows (inputs,
// verdict and reason list), matches and crossings, bit for bit, with
// srcRun's reason forms renumbered into this run's. It returns how many
// stars it copied and fails, copying nothing, unless that is len(ids).
// The source must be a ledger of this build's schema whose reasons are
// stored as lists (schema 10 on).
func (w *RunWriter) CopyComputed(ctx context.Context, srcPath string, srcRun int64, ids []string) (int64, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return 0, err
	}
	fail := func(err error) (int64, error) {
		return 0, fmt.Errorf("ledger %s run %d: copy the stars of %s run %d: %w", w.l.path, w.id, srcPath, srcRun, err)
	}
	conn, err := w.l.db.Conn(ctx)
	if err != nil {
		return fail(err)
	}
	defer conn.Close()
	if err := conn.Raw(func(dc any) error {
		return dc.(*sqlite3.SQLiteConn).RegisterFunc(shiftFormsFunc, shiftForms, true)
	}); err != nil {
		return fail(err)
	}
	if _, err := conn.ExecContext(ctx, `ATTACH DATABASE ? AS src`, dsn(srcPath, Options{ReadOnly: true, BusyTimeout: DefaultBusyTimeout})); err != nil {
		return fail(err)
	}
	defer conn.ExecContext(context.WithoutCancel(ctx), `DETACH DATABASE src`)
	var version int
	if err := conn.QueryRowContext(ctx, `PRAGMA src.user_version`).Scan(&version); err != nil {
		return fail(err)
	}
	if version != SchemaVersion() {
		return fail(fmt.Errorf("its schema is version %d, this build's %d: open it with this build once to upgrade it", version, SchemaVersion()))
	}
	var n int64
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		return fail(err)
	}
	defer tx.Rollback()
	if n, err = w.copyIn(ctx, tx, srcRun, ids); err != nil {
		return fail(err)
	}
	if err := tx.Commit(); err != nil {
		return fail(err)
	}
	w.computed += n
	return n, nil
}

// copyIn does CopyComputed's work in tx.
func (w *RunWriter) copyIn(ctx context.Context, tx *sql.Tx, srcRun int64, ids []string) (int64, error) {
	if _, err := tx.ExecContext(ctx, `CREATE TEMP TABLE IF NOT EXISTS copy_ids (star_id TEXT PRIMARY KEY) WITHOUT ROWID`); err != nil {
		return 0, err
	}
	if _, err := tx.ExecContext(ctx, `DELETE FROM temp.copy_ids`); err != nil {
		return 0, err
	}
	st, err := tx.PrepareContext(ctx, `INSERT INTO temp.copy_ids (star_id) VALUES (?)`)
	if err != nil {
		return 0, err
	}
	for _, id := range ids {
		if _, err := st.ExecContext(ctx, id); err != nil {
			st.Close()
			return 0, fmt.Errorf("star %q: %w", id, err)
		}
	}
	st.Close()
	const chosen = `star_id IN (SELECT star_id FROM temp.copy_ids)`
	var legacy int64
	if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM src.star_reasons WHERE run_id = ? AND `+chosen, srcRun).Scan(&legacy); err != nil {
		return 0, err
	}
	if legacy > 0 {
		return 0, fmt.Errorf("%d reasons are stored the way ledgers before schema 10 stored them; re-run the tile with this build", legacy)
	}
	// The copied forms take ids above every form of this run, those the
	// writer made for AddStars included, and reserve them there.
	var base, srcMax int64
	if err := tx.QueryRowContext(ctx, `SELECT coalesce(max(form_id) + 1, 0) FROM main.reason_forms WHERE run_id = ?`, w.id).Scan(&base); err != nil {
		return 0, err
	}
	if err := tx.QueryRowContext(ctx, `SELECT coalesce(max(form_id), -1) FROM src.reason_forms WHERE run_id = ?`, srcRun).Scan(&srcMax); err != nil {
		return 0, err
	}
	w.formMu.Lock()
	base = max(base, int64(len(w.formList)))
	for int64(len(w.formList)) <= base+srcMax {
		w.formList = append(w.formList, form{id: int64(len(w.formList))})
		w.formWritten = append(w.formWritten, true) // a copied form, or a gap: never written by AddEncoded
	}
	w.formMu.Unlock()
	if _, err := tx.ExecContext(ctx, `INSERT INTO main.reason_forms (run_id, form_id, rule_id, outcome, severity, threshold, message)
		SELECT ?, form_id + ?, rule_id, outcome, severity, threshold, message FROM src.reason_forms WHERE run_id = ?`, w.id, base, srcRun); err != nil {
		return 0, err
	}
	cols := strings.Split(computedCols+", reason_list, "+inputCols+", dup_count", ", ")
	sel := make([]string, len(cols))
	for k, c := range cols {
		switch c {
		case "computed_in_run":
			sel[k] = strconv.FormatInt(w.id, 10)
		case "reason_list":
			sel[k] = "CASE WHEN reason_list IS NULL THEN NULL ELSE " + shiftFormsFunc + "(reason_list, " + strconv.FormatInt(base, 10) + ") END"
		default:
			sel[k] = c
		}
	}
	res, err := tx.ExecContext(ctx, `INSERT INTO main.computed_verdicts (`+strings.Join(cols, ", ")+`)
		SELECT `+strings.Join(sel, ", ")+` FROM src.computed_verdicts WHERE computed_in_run = ? AND `+chosen+` ORDER BY star_id`, srcRun)
	if err != nil {
		return 0, err
	}
	n, err := res.RowsAffected()
	if err != nil {
		return 0, err
	}
	if n != int64(len(ids)) {
		return 0, fmt.Errorf("%d of the %d stars asked for were computed in that run", n, len(ids))
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO main.matches (run_id, star_id, catalog, counterpart_id, sep_arcsec, match_prob, candidates, ambiguous)
		SELECT ?, star_id, catalog, counterpart_id, sep_arcsec, match_prob, candidates, ambiguous
		FROM src.matches WHERE run_id = ? AND `+chosen+` ORDER BY star_id, catalog`, w.id, srcRun); err != nil {
		return 0, err
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO main.crossings (run_id, star_id, x_kpc, y_kpc, t_myr)
		SELECT ?, star_id, x_kpc, y_kpc, t_myr FROM src.crossings WHERE run_id = ? AND `+chosen+` ORDER BY rowid`, w.id, srcRun); err != nil {
		return 0, err
	}
	return n, nil
}

// shiftForms adds base to the form id of every entry of a reason list
// ([[form_id, value(, message)], ...], see appendReason), leaving every
// other byte as it is. The caller keeps NULL lists out: the driver
// returns a Go nil as an empty string.
func shiftForms(list string, base int64) (string, error) {
	if base == 0 {
		return list, nil
	}
	var b strings.Builder
	b.Grow(len(list) + 8)
	depth, inStr, esc := 0, false, false
	for i := 0; i < len(list); i++ {
		ch := list[i]
		switch {
		case inStr:
			switch {
			case esc:
				esc = false
			case ch == '\\':
				esc = true
			case ch == '"':
				inStr = false
			}
		case ch == '"':
			inStr = true
		case ch == '[':
			depth++
			if depth == 2 {
				j := i + 1
				for j < len(list) && list[j] >= '0' && list[j] <= '9' {
					j++
				}
				id, err := strconv.ParseInt(list[i+1:j], 10, 64)
				if err != nil {
					return "", fmt.Errorf("reason list %q: entry at byte %d: form id: %w", list, i, err)
				}
				b.WriteByte('[')
				b.WriteString(strconv.FormatInt(id+base, 10))
				i = j - 1
				continue
			}
		case ch == ']':
			depth--
		}
		b.WriteByte(ch)
	}
	return b.String(), nil
}

// AddTiles records the tile runs a gathered run took its stars from.
func (w *RunWriter) AddTiles(ctx context.Context, tiles []TileRun) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return err
	}
	return w.l.inTx(ctx, func(tx *sql.Tx) error {
		for _, t := range tiles {
			if _, err := tx.ExecContext(ctx, `INSERT INTO run_tiles (run_id, tile, ledger, tile_run) VALUES (?, ?, ?, ?)`,
				w.id, t.Tile, t.Ledger, t.TileRun); err != nil {
				return fmt.Errorf("ledger %s run %d: tile %s: %w", w.l.path, w.id, t.Tile, err)
			}
		}
		return nil
	})
}

// RunTiles returns the tile runs run was gathered from (none for a run
// made by one process), by tile name.
func (l *Ledger) RunTiles(ctx context.Context, runID int64) (map[string]TileRun, error) {
	rows, err := l.db.QueryContext(ctx, `SELECT tile, ledger, tile_run FROM run_tiles WHERE run_id = ?`, runID)
	if err != nil {
		return nil, fmt.Errorf("ledger %s: tiles of run %d: %w", l.path, runID, err)
	}
	defer rows.Close()
	out := map[string]TileRun{}
	for rows.Next() {
		var t TileRun
		if err := rows.Scan(&t.Tile, &t.Ledger, &t.TileRun); err != nil {
			return nil, err
		}
		out[t.Tile] = t
	}
	return out, rows.Err()
}
