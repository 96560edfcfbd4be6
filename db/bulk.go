package db

import (
	"context"
	"database/sql/driver"
	"fmt"
	"strings"

	sqlite3 "github.com/mattn/go-sqlite3"
)

// bulkRows is how many rows one multi-row INSERT carries. Fewer statements
// is what makes the writer fast: per-statement setup in SQLite, cgo and
// database/sql costs more than binding. 64 rows of the widest table (32
// columns) stay far below SQLite's 32766 parameter limit.
const bulkRows = 64

// bulk collects rows for one table and inserts them bulkRows at a time on
// a raw driver connection, inside the caller's transaction. Values must be
// driver values (nil, int64, float64, string, bool).
type bulk struct {
	conn   *sqlite3.SQLiteConn
	head   string // INSERT INTO t (cols) VALUES
	row    string // (?, ?, ...)
	tail   string // ON CONFLICT ... or ""
	ncol   int
	full   driver.Stmt
	args   []driver.NamedValue
	nrows  int
	what   string   // table name for errors
	labels []string // star id of each pending row, for errors
}

func newBulk(conn *sqlite3.SQLiteConn, what, head string, ncol int, tail string) *bulk {
	return &bulk{conn: conn, what: what, head: head, row: "(" + placeholders(ncol) + ")", tail: tail, ncol: ncol,
		args: make([]driver.NamedValue, 0, ncol*bulkRows)}
}

func (b *bulk) sql(n int) string {
	var sb strings.Builder
	sb.WriteString(b.head)
	for i := range n {
		if i > 0 {
			sb.WriteString(", ")
		}
		sb.WriteString(b.row)
	}
	sb.WriteString(" ")
	sb.WriteString(b.tail)
	return sb.String()
}

// add queues one row; label names it in errors.
func (b *bulk) add(label string, vals ...driver.Value) error {
	if len(vals) != b.ncol {
		panic(fmt.Sprintf("db: %s row with %d values, want %d", b.what, len(vals), b.ncol))
	}
	for _, v := range vals {
		b.args = append(b.args, driver.NamedValue{Ordinal: len(b.args) + 1, Value: v})
	}
	b.labels = append(b.labels, label)
	b.nrows++
	if b.nrows == bulkRows {
		if b.full == nil {
			st, err := b.conn.Prepare(b.sql(bulkRows))
			if err != nil {
				return fmt.Errorf("%s: %w", b.what, err)
			}
			b.full = st
		}
		return b.exec(b.full)
	}
	return nil
}

// exec runs the insert through the driver's query path, not its exec
// path: go-sqlite3 (v1.14.53) then binds every argument and steps in one
// cgo crossing, where exec makes one crossing per bound value (measured:
// the bind cost of a full 1M-star run fell from ~14 cpu-s to ~1). An
// INSERT without RETURNING yields no rows; its first step is the whole
// statement, and Close resets it.
func (b *bulk) exec(st driver.Stmt) error {
	rows, err := st.(driver.StmtQueryContext).QueryContext(context.Background(), b.args)
	if err == nil {
		err = rows.Close()
	}
	if err != nil {
		err = fmt.Errorf("%s, stars %q .. %q: %w", b.what, b.labels[0], b.labels[len(b.labels)-1], err)
	}
	b.args, b.labels, b.nrows = b.args[:0], b.labels[:0], 0
	return err
}

// flush inserts the rows still queued.
func (b *bulk) flush() error {
	if b.nrows == 0 {
		return nil
	}
	st, err := b.conn.Prepare(b.sql(b.nrows))
	if err != nil {
		return fmt.Errorf("%s: %w", b.what, err)
	}
	defer st.Close()
	return b.exec(st)
}

func (b *bulk) close() {
	if b.full != nil {
		b.full.Close()
	}
}

// Driver-value helpers: NaN and "" become NULL.

func dvf(x float64) driver.Value {
	if x != x {
		return nil
	}
	return x
}

// dvPos is n, or NULL when n is 0 (a count that does not apply).
func dvPos(n int) driver.Value {
	if n == 0 {
		return nil
	}
	return int64(n)
}

func dvs(s string) driver.Value {
	if s == "" {
		return nil
	}
	return s
}
