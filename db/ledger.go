package db

import (
	"context"
	"database/sql"
	"embed"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	_ "github.com/mattn/go-sqlite3" // registers the "sqlite3" driver
)

// Sentinel errors; every returned error wraps one of these where it applies,
// so callers can use errors.Is.
var (
	ErrNewerSchema = errors.New("ledger schema is newer than this build")
	ErrBusy        = errors.New("ledger is busy")
	ErrNotLedger   = errors.New("not a starvet ledger")
	ErrNoRun       = errors.New("no such run")
	ErrUnknownStar = errors.New("unknown star")
	ErrNoRuns      = errors.New("no complete runs")
	ErrRunDone     = errors.New("run already finished")
	ErrBadRecord   = errors.New("bad star record")
	ErrSummary     = errors.New("run summary disagrees with the ledger")
)

// Defaults for Options.
const (
	DefaultBusyTimeout = 5 * time.Second
	DefaultLockWait    = 10 * time.Second
	lockPoll           = 50 * time.Millisecond
	// writerCacheKiB is the page cache per writable connection. The star
	// indexes take random-order inserts; they must stay in memory or every
	// insert reads a page back (measured: 15x slower with the 2 MiB default).
	writerCacheKiB = 256 << 10
	// newLedgerPageSize is the page size of ledgers this build creates
	// (SQLite's default is 4096). Larger pages mean fewer B-tree pages
	// and splits per inserted row; WAL mode fixes the size at creation,
	// so older ledgers keep theirs. 32768 wrote the 1M-star writer
	// benchmark 5-10% faster but made the end-to-end runs slower and the
	// ledger larger (BENCHMARKS.md, 2026-12-03).
	newLedgerPageSize = 8192
)

// Options tune Open.
type Options struct {
	// ReadOnly opens the ledger without write access: no migrations, no
	// stale-run repair, no BeginRun. The file must exist.
	ReadOnly bool
	// BusyTimeout is how long SQLite retries a locked database before
	// failing a statement (default 5 s).
	BusyTimeout time.Duration
	// LockWait bounds how long BeginRun polls for the writer lock
	// (default 10 s).
	LockWait time.Duration
}

//go:embed migrations/*.sql
var migrationFS embed.FS

type migration struct {
	version int
	name    string
	sql     string
}

// loadMigrations reads the embedded files NNNN_name.sql in order. A gap or a
// duplicate number is a programmer error.
func loadMigrations() []migration {
	ents, err := fs.ReadDir(migrationFS, "migrations")
	if err != nil {
		panic(err)
	}
	var ms []migration
	for _, e := range ents {
		num, _, ok := strings.Cut(e.Name(), "_")
		v, err := strconv.Atoi(num)
		if !ok || err != nil {
			panic("db: migration file without a number: " + e.Name())
		}
		b, err := migrationFS.ReadFile(path.Join("migrations", e.Name()))
		if err != nil {
			panic(err)
		}
		ms = append(ms, migration{v, e.Name(), string(b)})
	}
	sort.Slice(ms, func(i, j int) bool { return ms[i].version < ms[j].version })
	for i, m := range ms {
		if m.version != i+1 {
			panic(fmt.Sprintf("db: migration %s out of sequence (want %04d)", m.name, i+1))
		}
	}
	return ms
}

// SchemaVersion is the newest schema this build knows.
func SchemaVersion() int { return len(loadMigrations()) }

// Ledger is an open SQLite ledger. It is safe for concurrent use by
// several goroutines; at most one RunWriter per ledger file exists at a time
// across all processes (see BeginRun).
type Ledger struct {
	path string
	opt  Options
	db   *sql.DB
	now  func() time.Time
	// forms caches each run's reason_forms (schema 10) for reading the
	// reason lists of its stars.
	formsMu sync.Mutex
	forms   map[int64][]form
}

// Path returns the ledger file name as given to Open.
func (l *Ledger) Path() string { return l.path }

// dsn builds a file: URI; characters with a meaning in URIs are escaped so
// any file name works.
func dsn(p string, opt Options) string {
	r := strings.NewReplacer("%", "%25", "?", "%3f", "#", "%23")
	q := fmt.Sprintf("_busy_timeout=%d&_foreign_keys=on", opt.BusyTimeout.Milliseconds())
	if opt.ReadOnly {
		q += "&mode=ro"
	} else {
		q += "&mode=rwc&_journal_mode=WAL&_synchronous=NORMAL&_txlock=immediate&_cache_size=" + strconv.Itoa(-writerCacheKiB)
	}
	return "file:" + r.Replace(p) + "?" + q
}

// Open opens (creating if needed, unless read-only) the ledger at path,
// applies pending migrations and, when no writer holds the lock, marks runs
// left in state running by a dead writer as failed.
func Open(ctx context.Context, path string, opt Options) (*Ledger, error) {
	if opt.BusyTimeout <= 0 {
		opt.BusyTimeout = DefaultBusyTimeout
	}
	if opt.LockWait <= 0 {
		opt.LockWait = DefaultLockWait
	}
	if opt.ReadOnly {
		if _, err := os.Stat(path); err != nil {
			return nil, fmt.Errorf("open ledger %s: %w", path, err)
		}
	} else if err := presize(ctx, path); err != nil {
		return nil, err
	}
	sdb, err := sql.Open("sqlite3", dsn(path, opt))
	if err != nil {
		return nil, fmt.Errorf("open ledger %s: %w", path, err)
	}
	l := &Ledger{path: path, opt: opt, db: sdb, now: time.Now}
	if err := l.init(ctx); err != nil {
		sdb.Close()
		return nil, err
	}
	return l, nil
}

// presize gives a ledger file that does not exist yet (or is empty) the
// page size newLedgerPageSize, which must be set before the first
// connection switches the file to WAL.
func presize(ctx context.Context, path string) error {
	if fi, err := os.Stat(path); err == nil && fi.Size() > 0 {
		return nil
	}
	r := strings.NewReplacer("%", "%25", "?", "%3f", "#", "%23")
	sdb, err := sql.Open("sqlite3", "file:"+r.Replace(path)+"?mode=rwc&_busy_timeout="+strconv.Itoa(int(DefaultBusyTimeout.Milliseconds())))
	if err != nil {
		return fmt.Errorf("create ledger %s: %w", path, err)
	}
	defer sdb.Close()
	// An integer of our own; PRAGMA takes no parameters. A no-op if
	// another process created the ledger meanwhile.
	if _, err := sdb.ExecContext(ctx, "PRAGMA page_size = "+strconv.Itoa(newLedgerPageSize)+"; PRAGMA journal_mode = WAL"); err != nil {
		return fmt.Errorf("create ledger %s: %w", path, err)
	}
	return nil
}

func (l *Ledger) init(ctx context.Context) error {
	var v int
	if err := l.db.QueryRowContext(ctx, "PRAGMA user_version").Scan(&v); err != nil {
		return fmt.Errorf("open ledger %s: %w", l.path, err)
	}
	ms := loadMigrations()
	if v > len(ms) {
		return fmt.Errorf("ledger %s was written by a newer starvet (schema %d, this build knows %d); refusing to use it: %w",
			l.path, v, len(ms), ErrNewerSchema)
	}
	if l.opt.ReadOnly {
		if v == 0 {
			return fmt.Errorf("ledger %s: %w (schema version 0)", l.path, ErrNotLedger)
		}
		if v < len(ms) {
			return fmt.Errorf("ledger %s has schema %d, this build needs %d: open it once without read-only to upgrade: %w",
				l.path, v, len(ms), ErrNotLedger)
		}
		return nil
	}
	if v == 0 {
		// A non-empty file without our schema is someone else's database.
		var n int
		if err := l.db.QueryRowContext(ctx, "SELECT count(*) FROM sqlite_schema").Scan(&n); err != nil {
			return fmt.Errorf("open ledger %s: %w", l.path, err)
		}
		if n > 0 {
			return fmt.Errorf("ledger %s: %w (it has %d schema objects but schema version 0)", l.path, ErrNotLedger, n)
		}
	}
	if err := l.migrate(ctx, ms); err != nil {
		return err
	}
	return l.repairStale(ctx)
}

// migrate applies each pending migration in its own transaction; the
// version is re-read inside the transaction so two processes opening a
// fresh ledger at once do not both apply it.
func (l *Ledger) migrate(ctx context.Context, ms []migration) error {
	for _, m := range ms {
		err := l.inTx(ctx, func(tx *sql.Tx) error {
			var v int
			if err := tx.QueryRowContext(ctx, "PRAGMA user_version").Scan(&v); err != nil {
				return err
			}
			if v >= m.version {
				return nil
			}
			if v != m.version-1 {
				return fmt.Errorf("schema version %d, cannot apply %s", v, m.name)
			}
			if _, err := tx.ExecContext(ctx, m.sql); err != nil {
				return fmt.Errorf("%s: %w", m.name, err)
			}
			// PRAGMA takes no parameters; the value is our own integer.
			_, err := tx.ExecContext(ctx, "PRAGMA user_version = "+strconv.Itoa(m.version))
			return err
		})
		if err != nil {
			return fmt.Errorf("migrate ledger %s: %w", l.path, err)
		}
	}
	return nil
}

// repairStale marks runs in state running as failed when no writer holds
// the lock: their writer died.
func (l *Ledger) repairStale(ctx context.Context) error {
	lk, err := tryLock(l.lockPath(), true)
	if err != nil {
		return fmt.Errorf("ledger %s: %w", l.path, err)
	}
	if lk == nil {
		return nil // a writer is active; its run is genuinely running
	}
	defer lk.release()
	return l.failStale(ctx)
}

// failStale must be called with the writer lock held.
func (l *Ledger) failStale(ctx context.Context) error {
	_, err := l.db.ExecContext(ctx,
		`UPDATE runs SET state = 'failed', finished_at = ?,
		 note = CASE WHEN note IS NULL OR note = '' THEN ? ELSE note || '; ' || ? END
		 WHERE state = 'running'`,
		l.stamp(), staleNote, staleNote)
	if err != nil {
		return fmt.Errorf("ledger %s: mark interrupted runs failed: %w", l.path, err)
	}
	return nil
}

const staleNote = "interrupted: the writing process ended without finishing the run"

func (l *Ledger) stamp() string { return l.now().UTC().Format(time.RFC3339) }

func (l *Ledger) lockPath() string { return l.path + ".lock" }

// Close closes the database. An unfinished RunWriter should be finished or
// failed first; if not, its run is repaired as stale by the next writer.
func (l *Ledger) Close() error { return l.db.Close() }

func (l *Ledger) inTx(ctx context.Context, fn func(*sql.Tx) error) error {
	tx, err := l.db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	if err := fn(tx); err != nil {
		tx.Rollback()
		return err
	}
	return tx.Commit()
}

// IntegrityCheck runs PRAGMA integrity_check and returns its findings
// ("ok" when the file is sound).
func (l *Ledger) IntegrityCheck(ctx context.Context) (string, error) {
	rows, err := l.db.QueryContext(ctx, "PRAGMA integrity_check")
	if err != nil {
		return "", fmt.Errorf("ledger %s: integrity check: %w", l.path, err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			return "", err
		}
		out = append(out, s)
	}
	return strings.Join(out, "\n"), rows.Err()
}
