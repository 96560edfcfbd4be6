// Package db is starvet's ledger: an append-only SQLite file recording
// every run, every star's verdict in every run, and the inputs, matches
// and reasons of every computation. It is the only package that knows SQL;
// db/SCHEMA.md documents every table and column.
//
// In: RunInfo at BeginRun; CatalogRow, QuarantineRow and batches of
// StarRecord (one transaction per batch) from the pipeline; RunSummary at
// Finish. Values are in the canonical units of starvet/crossmatch/catalog
// (deg, mas, mas/yr, km/s, kpc); NaN and "" are stored as NULL and read
// back as NaN and "".
//
// Out: Run summaries, PreviousState (status, input hash and computing run
// of each star of a run, for incremental re-vetting), Why (a star's
// history with input changes between computations), Diff (status
// transitions between two runs), List (verdicts of a run).
//
// Concurrency: one writer per ledger file at a time, enforced by flock on
// <ledger>.lock (BeginRun waits up to Options.LockWait, then ErrBusy).
// Readers never take the lock and work while a run writes (WAL). The
// kernel drops the lock when the writer dies, so a run left in state
// running without a lock holder is known to be dead: the next writer or
// writable Open marks it failed; read-only readers show it as
// "failed (interrupted)".
//
// Schema changes are numbered files in migrations/, applied in order, one
// transaction each, tracked by PRAGMA user_version; a ledger newer than
// the build is refused (ErrNewerSchema).
//
// Incremental runs: CarryForwardRest copies, after the run's own stars are
// written, every verdict of an earlier run that this run lacks;
// CarryForwardAll copies them all before any star is written (the pipeline
// does it while it still reads its catalogs), and AddStars then replaces
// the carried copy of each star it writes. Either way one INSERT ... SELECT
// and one UPDATE of stars.last_run, in one transaction.
//
// Speed: AddStars writes multi-row INSERTs on the raw driver connection,
// each bound and stepped in one cgo crossing. inputs, verdicts, reasons,
// matches and stars are WITHOUT ROWID tables keyed by (run_id, star_id,
// ...), so a row is one B-tree insert. Send stars in ascending star id order across
// batches: the keys then grow by appending, and BenchmarkAddStars shows
// the difference against a shuffled order. BenchmarkCarryForwardAll1M
// times the carry of 1M verdicts.
package db
