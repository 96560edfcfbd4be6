// Package db is starvet's ledger: an append-only SQLite file recording
// every run, every star's verdict in every run, and the inputs, matches
// and reasons of every computation. It is the only package that knows SQL;
// db/SCHEMA.md documents every table and column.
//
// In: RunInfo at BeginRun, with the run's settings (RunSettings: named
// values and the rule text, written in the transaction that inserts the
// run, fingerprinted as config_hash); CatalogRow, QuarantineRow and batches of
// StarRecord (one transaction per batch) from the pipeline; RunSummary at
// Finish. Values are in the canonical units of starvet/catalog
// (deg, mas, mas/yr, km/s, kpc); NaN and "" are stored as NULL and read
// back as NaN and "".
//
// Out: Run summaries, RunSettings (what a run recorded; none before
// schema 8), PreviousState (status, input hash and computing run
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
// Incremental runs: a run writes only the stars it computes (or
// withdraws). Its verdict set is, for each star, the latest computation
// made in the run or in an earlier complete run (a failed run's set is
// only its own): the verdicts view states this rule in SQL, scanSets
// applies it in one pass over computed_verdicts for PreviousState, List,
// StatusCounts and Diff. Carrying a star forward therefore writes nothing,
// and Finish counts the set from the previous run's counts plus one probe
// per computed star.
//
// Speed: AddStars (Encode, then AddEncoded) writes multi-row INSERTs on
// the raw driver connection, each bound and stepped in one cgo crossing.
// Since schema 10 a computed star is one row of computed_verdicts (its
// verdict, inputs and reason list) plus its matches; both are WITHOUT
// ROWID tables, so a row is one B-tree insert. A pipeline calls Encode on
// its computing goroutines and AddEncoded on the writer's. Send stars in ascending star id order across batches: the keys
// then grow by appending, and BenchmarkAddStars shows the difference
// against a shuffled order. BenchmarkIncremental times PreviousState, a
// 1% rerun and the audit reads on a 1M-star ledger.
package db
