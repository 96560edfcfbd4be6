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

// CopySource names stars a run of another ledger computed: those of
// IDs, or with Except every star computed in Run but those of IDs.
type CopySource struct {
	Path   string // the other ledger (of this build's schema, schema 10 on)
	Run    int64
	IDs    []string
	Except bool
}

// CopyComputed copies into this run the stars of every source as the
// source's run computed them: their computed_verdicts rows (inputs,
// verdict and reason list), matches and crossings, bit for bit, with each
// source run's reason forms renumbered into this run's. The rows are
// gathered in a temporary table and written in star id order, in one
// transaction: appending to the tables' B-trees in key order is what keeps
// a copy of a million stars from tens of seconds of scattered inserts. It
// returns how many stars it copied and fails, copying nothing, when a
// source lacks a star asked for.
func (w *RunWriter) CopyComputed(ctx context.Context, sources []CopySource) (int64, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if err := w.check(); err != nil {
		return 0, err
	}
	fail := func(err error) (int64, error) {
		return 0, fmt.Errorf("ledger %s run %d: copy computed stars: %w", w.l.path, w.id, err)
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
	cols := strings.Split(computedCols+", reason_list, "+inputCols+", dup_count", ", ")
	for _, q := range []string{
		`DROP TABLE IF EXISTS temp.copy_verdicts`, `DROP TABLE IF EXISTS temp.copy_matches`, `DROP TABLE IF EXISTS temp.copy_crossings`,
		`CREATE TEMP TABLE copy_verdicts AS SELECT ` + strings.Join(cols, ", ") + ` FROM main.computed_verdicts WHERE 0`,
		`CREATE TEMP TABLE copy_matches AS SELECT * FROM main.matches WHERE 0`,
		`CREATE TEMP TABLE copy_crossings AS SELECT * FROM main.crossings WHERE 0`,
		`DROP TABLE IF EXISTS temp.copy_forms`,
		`CREATE TEMP TABLE copy_forms AS SELECT * FROM main.reason_forms WHERE 0`,
		`CREATE TEMP TABLE IF NOT EXISTS copy_ids (star_id TEXT PRIMARY KEY) WITHOUT ROWID`,
	} {
		if _, err := conn.ExecContext(ctx, q); err != nil {
			return fail(err)
		}
	}
	defer conn.ExecContext(context.WithoutCancel(ctx), `DROP TABLE IF EXISTS temp.copy_verdicts; DROP TABLE IF EXISTS temp.copy_matches; DROP TABLE IF EXISTS temp.copy_crossings; DROP TABLE IF EXISTS temp.copy_forms`)
	// The copied forms take ids above every form of this run, those the
	// writer made for AddStars included.
	var next int64
	if err := conn.QueryRowContext(ctx, `SELECT coalesce(max(form_id) + 1, 0) FROM main.reason_forms WHERE run_id = ?`, w.id).Scan(&next); err != nil {
		return fail(err)
	}
	w.formMu.Lock()
	next = max(next, int64(len(w.formList)))
	w.formMu.Unlock()
	var n int64
	for _, src := range sources {
		k, used, err := w.stage(ctx, conn, cols, src, next)
		if err != nil {
			return fail(fmt.Errorf("%s run %d: %w", src.Path, src.Run, err))
		}
		n, next = n+k, next+used
	}
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		return fail(err)
	}
	defer tx.Rollback()
	for _, q := range []string{
		`INSERT INTO main.reason_forms SELECT * FROM temp.copy_forms`,
		`INSERT INTO main.computed_verdicts (` + strings.Join(cols, ", ") + `) SELECT * FROM temp.copy_verdicts ORDER BY star_id`,
		`INSERT INTO main.matches SELECT * FROM temp.copy_matches ORDER BY star_id, catalog`,
		`INSERT INTO main.crossings SELECT * FROM temp.copy_crossings ORDER BY star_id, rowid`,
	} {
		if _, err := tx.ExecContext(ctx, q); err != nil {
			return fail(err)
		}
	}
	if err := tx.Commit(); err != nil {
		return fail(err)
	}
	// Reserve the copied forms' ids: AddStars numbers its forms above them.
	w.formMu.Lock()
	for int64(len(w.formList)) < next {
		w.formList = append(w.formList, form{id: int64(len(w.formList))})
		w.formWritten = append(w.formWritten, true)
	}
	w.formMu.Unlock()
	w.computed += n
	return n, nil
}

// stage copies one source's stars and forms into the temporary tables,
// its form ids shifted by base, and returns how many stars it staged and
// how many form ids it used. The source is attached for the while: SQLite
// attaches only a few databases at once.
func (w *RunWriter) stage(ctx context.Context, conn *sql.Conn, cols []string, src CopySource, base int64) (n, used int64, err error) {
	if _, err := conn.ExecContext(ctx, `ATTACH DATABASE ? AS src`, dsn(src.Path, Options{ReadOnly: true, BusyTimeout: DefaultBusyTimeout})); err != nil {
		return 0, 0, err
	}
	defer conn.ExecContext(context.WithoutCancel(ctx), `DETACH DATABASE src`)
	// One transaction for the staging, which writes only the temporary
	// tables; ATTACH and DETACH stay outside it, as SQLite requires.
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		return 0, 0, err
	}
	defer tx.Rollback()
	var version int
	if err := tx.QueryRowContext(ctx, `PRAGMA src.user_version`).Scan(&version); err != nil {
		return 0, 0, err
	}
	if version != SchemaVersion() {
		return 0, 0, fmt.Errorf("its schema is version %d, this build's %d: open it with this build once to upgrade it", version, SchemaVersion())
	}
	if _, err := tx.ExecContext(ctx, `DELETE FROM temp.copy_ids`); err != nil {
		return 0, 0, err
	}
	st, err := tx.PrepareContext(ctx, `INSERT INTO temp.copy_ids (star_id) VALUES (?)`)
	if err != nil {
		return 0, 0, err
	}
	for _, id := range src.IDs {
		if _, err := st.ExecContext(ctx, id); err != nil {
			st.Close()
			return 0, 0, fmt.Errorf("star %q: %w", id, err)
		}
	}
	st.Close()
	chosen := `star_id IN (SELECT star_id FROM temp.copy_ids)`
	if src.Except {
		chosen = `star_id NOT IN (SELECT star_id FROM temp.copy_ids)`
	}
	var legacy int64
	if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM src.star_reasons WHERE run_id = ? AND `+chosen, src.Run).Scan(&legacy); err != nil {
		return 0, 0, err
	}
	if legacy > 0 {
		return 0, 0, fmt.Errorf("%d reasons are stored the way ledgers before schema 10 stored them; re-run it with this build", legacy)
	}
	var srcMax int64
	if err := tx.QueryRowContext(ctx, `SELECT coalesce(max(form_id), -1) FROM src.reason_forms WHERE run_id = ?`, src.Run).Scan(&srcMax); err != nil {
		return 0, 0, err
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO temp.copy_forms (run_id, form_id, rule_id, outcome, severity, threshold, message)
		SELECT ?, form_id + ?, rule_id, outcome, severity, threshold, message FROM src.reason_forms WHERE run_id = ?`, w.id, base, src.Run); err != nil {
		return 0, 0, err
	}
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
	res, err := tx.ExecContext(ctx, `INSERT INTO temp.copy_verdicts SELECT `+strings.Join(sel, ", ")+
		` FROM src.computed_verdicts WHERE computed_in_run = ? AND `+chosen, src.Run)
	if err != nil {
		return 0, 0, err
	}
	n, err = res.RowsAffected()
	if err != nil {
		return 0, 0, err
	}
	if !src.Except && n != int64(len(src.IDs)) {
		return 0, 0, fmt.Errorf("%d of the %d stars asked for were computed in that run", n, len(src.IDs))
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO temp.copy_matches (run_id, star_id, catalog, counterpart_id, sep_arcsec, match_prob, candidates, ambiguous)
		SELECT ?, star_id, catalog, counterpart_id, sep_arcsec, match_prob, candidates, ambiguous
		FROM src.matches WHERE run_id = ? AND `+chosen, w.id, src.Run); err != nil {
		return 0, 0, err
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO temp.copy_crossings (run_id, star_id, x_kpc, y_kpc, t_myr)
		SELECT ?, star_id, x_kpc, y_kpc, t_myr FROM src.crossings WHERE run_id = ? AND `+chosen+` ORDER BY rowid`, w.id, src.Run); err != nil {
		return 0, 0, err
	}
	return n, srcMax + 1, tx.Commit()
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
