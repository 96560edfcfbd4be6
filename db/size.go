package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
)

// ErrNoDBStat is TableBytes's error when the linked SQLite lacks the dbstat
// virtual table: go-sqlite3 compiles it in only with the build tag
// sqlite_dbstat (go test -tags sqlite_dbstat ...). The sqlite3 command-line
// tool has it: SELECT name, sum(pgsize) FROM dbstat GROUP BY name.
var ErrNoDBStat = errors.New("this build's SQLite has no dbstat table (build with -tags sqlite_dbstat)")

// TableSize is the space one B-tree takes in the ledger file: a table (for
// a WITHOUT ROWID table, its primary key is the table) or an index. The
// pseudo-entry "(free)" is the free-list, "sqlite_schema" the schema.
type TableSize struct {
	Name    string
	Table   string // the table an index belongs to; Name for a table
	Pages   int64
	Bytes   int64 // Pages times the page size
	Payload int64 // bytes of row content on those pages, the rest is page and cell overhead and free space
}

// TableBytes measures every table and index, largest first, as the
// connection sees the ledger (its write-ahead log included).
func (l *Ledger) TableBytes(ctx context.Context) ([]TableSize, error) {
	rows, err := l.db.QueryContext(ctx,
		`SELECT d.name, coalesce(s.tbl_name, d.name), count(*), sum(d.pgsize), sum(d.payload)
		   FROM dbstat AS d LEFT JOIN sqlite_schema AS s ON s.name = d.name
		  GROUP BY d.name ORDER BY sum(d.pgsize) DESC, d.name`)
	if err != nil {
		if strings.Contains(err.Error(), "no such table: dbstat") {
			err = ErrNoDBStat
		}
		return nil, fmt.Errorf("ledger %s: table sizes: %w", l.path, err)
	}
	defer rows.Close()
	var out []TableSize
	for rows.Next() {
		var t TableSize
		if err := rows.Scan(&t.Name, &t.Table, &t.Pages, &t.Bytes, &t.Payload); err != nil {
			return nil, fmt.Errorf("ledger %s: table sizes: %w", l.path, err)
		}
		out = append(out, t)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("ledger %s: table sizes: %w", l.path, err)
	}
	var free, pageSize int64
	if err := l.db.QueryRowContext(ctx, "SELECT freelist_count, page_size FROM pragma_freelist_count, pragma_page_size").
		Scan(&free, &pageSize); err != nil {
		return nil, fmt.Errorf("ledger %s: free pages: %w", l.path, err)
	}
	if free > 0 {
		out = append(out, TableSize{Name: "(free)", Table: "(free)", Pages: free, Bytes: free * pageSize})
	}
	return out, nil
}

// ComputedStars is how many verdicts the ledger holds, all runs together:
// the divisor for bytes per star.
func (l *Ledger) ComputedStars(ctx context.Context) (int64, error) {
	var n int64
	if err := l.db.QueryRowContext(ctx, "SELECT count(*) FROM computed_verdicts").Scan(&n); err != nil {
		return 0, fmt.Errorf("ledger %s: count verdicts: %w", l.path, err)
	}
	return n, nil
}
