package vetting

import (
	"context"
	"slices"
	"strings"
	"time"

	"starvet/db"
	"starvet/internal/parallel"
	"starvet/verdict"
)

// runInfo is what the ledger records about a run when it begins.
func runInfo(toolVersion string, s *runSettings) db.RunInfo {
	c := s.campaign
	return db.RunInfo{
		ToolVersion:  toolVersion,
		CampaignHash: c.Hash(),
		RulesetHash:  s.rules.Fingerprint,
		MatchHash:    c.MatchHash(),
		ModelHash:    s.modelHash,
		Seed:         c.Seed,
		Full:         s.opt.Full,
		Note:         "campaign " + c.File,
		Settings:     s.record,
	}
}

// recordCatalogs writes each catalog's row counts and quarantined rows.
func recordCatalogs(ctx context.Context, w *db.RunWriter, cats *Catalogs, sum *Summary) error {
	rows, quarantined := CatalogRecords(cats)
	for k, row := range rows {
		if err := w.AddCatalog(ctx, row); err != nil {
			return err
		}
		sum.Catalogs = append(sum.Catalogs, row)
		if err := w.AddQuarantine(ctx, quarantined[k]); err != nil {
			return err
		}
		sum.Quarantined += len(quarantined[k])
		sum.Warnings = append(sum.Warnings, cats.Reports[k].Warnings...)
	}
	return nil
}

// CatalogRecords is what the ledger records of each catalog read (the
// primary first): its row counts and its quarantined rows.
func CatalogRecords(cats *Catalogs) ([]db.CatalogRow, [][]db.QuarantineRow) {
	rows := make([]db.CatalogRow, len(cats.Reports))
	quarantined := make([][]db.QuarantineRow, len(cats.Reports))
	for k, rep := range cats.Reports {
		spec := cats.Specs[k]
		rows[k] = db.CatalogRow{Name: spec.Name, Release: spec.Release, File: spec.File, FileSHA256: rep.SHA256,
			RowsRead: int64(rep.RowsRead), RowsKept: int64(rep.RowsKept), RowsQuarantined: int64(len(rep.Quarantined)),
			Epoch: spec.EpochJyr, Role: string(spec.Role)}
		q := make([]db.QuarantineRow, len(rep.Quarantined))
		for i, x := range rep.Quarantined {
			q[i] = db.QuarantineRow{Catalog: spec.Name, Line: x.Line, Row: x.Row, Column: x.Column, ColumnName: x.ColumnName, Value: x.Value, Reason: x.Reason}
		}
		quarantined[k] = q
	}
	return rows, quarantined
}

// stageVetting names the progress stage that counts stars through quality,
// kinematics and the ledger.
const stageVetting = "quality, Monte Carlo, tracing, ledger"

// ledgerBatch is how many stars go into one ledger transaction.
const ledgerBatch = 20000

// writeVerdicts computes the planned stars and writes them, with the
// withdrawn ones, in batches of up to ledgerBatch stars in id order,
// counting statuses and transitions into sum. It returns how many records
// it wrote.
func (e *Engine) writeVerdicts(ctx context.Context, w *db.RunWriter, s *runSettings, in *runInput, p *plan, sum *Summary) (int, error) {
	ids := in.cats.Primary.IDs
	todo, gone := p.compute, p.withdraw
	written := 0
	err := e.computeAndWrite(ctx, w, len(todo)+len(gone), sum, func(ctx context.Context, ce *Engine, recs []db.StarRecord) ([]db.StarRecord, bool, error) {
		var part []int
		var partGone []string
		for len(part)+len(partGone) < ledgerBatch && (len(todo) > 0 || len(gone) > 0) {
			if len(gone) == 0 || (len(todo) > 0 && ids[todo[0]] < gone[0]) {
				part, todo = append(part, todo[0]), todo[1:]
			} else {
				partGone, gone = append(partGone, gone[0]), gone[1:]
			}
		}
		if len(part) == 0 && len(partGone) == 0 {
			return recs, false, nil
		}
		recs, err := ce.compute(ctx, s, in, part, recs[:0], sum)
		if err != nil {
			return nil, false, err
		}
		for i := range recs {
			st := recs[i].Verdict.Status
			sum.Counts[verdict.Status(st)]++
			if was, ok := p.was[recs[i].StarID]; !ok {
				sum.Transitions["(new) -> "+st]++
			} else if was != st {
				sum.Transitions[was+" -> "+st]++
			}
		}
		for _, id := range partGone {
			recs = append(recs, withdrawnRecord(id, in.cats, sum.PrevRunID, p.was[id]))
			sum.Transitions[p.was[id]+" -> "+string(verdict.Withdrawn)]++
			sum.Counts[verdict.Withdrawn]++
		}
		if len(partGone) > 0 {
			slices.SortFunc(recs, func(a, b db.StarRecord) int { return strings.Compare(a.StarID, b.StarID) })
		}
		written += len(recs)
		return recs, true, nil
	})
	return written, err
}

// finish closes the run with its counts.
func finish(ctx context.Context, w *db.RunWriter, computed, carried int, sum *Summary) error {
	counts := make(map[string]int64, len(sum.Counts))
	for k, v := range sum.Counts {
		counts[string(k)] = int64(v)
	}
	t := time.Now()
	if err := w.Finish(ctx, db.RunSummary{
		StarsTotal:      int64(computed + carried),
		StarsComputed:   int64(computed),
		StarsCarried:    int64(carried),
		RowsQuarantined: int64(sum.Quarantined),
		Counts:          counts,
	}); err != nil {
		return err
	}
	sum.addStage("finish", t)
	return nil
}

// computeAndWrite alternates between computing the next batch of records
// (next, on the caller's goroutine) and writing the previous one (on a
// writer goroutine, one transaction per batch), so that the ledger's
// single-threaded inserts overlap the Monte Carlo. next returns false when
// there is nothing left; it receives a spent batch's slice to reuse, and
// the engine to compute with: while the writer is the bottleneck (the last
// batch had to wait for it) that engine has one worker fewer, which leaves
// the writer a core of its own instead of a share of one; otherwise all
// workers. The first error of either side stops both. The writer side is
// writeBatches; the computing side stays here, beside the channels and the
// cancellation both sides share.
func (e *Engine) computeAndWrite(ctx context.Context, w *db.RunWriter, total int, sum *Summary,
	next func(ctx context.Context, ce *Engine, reuse []db.StarRecord) ([]db.StarRecord, bool, error)) error {
	workers := parallel.Workers(e.Workers)
	full, spare := *e, *e
	full.Workers, spare.Workers = workers, max(1, workers-1)
	ce := &full
	ctx, cancel := context.WithCancelCause(ctx)
	defer cancel(nil)
	st := begin(e.Progress, stageVetting, total)
	defer st.End()
	todo := make(chan encodedBatch) // unbuffered: at most one batch computed ahead
	spent := make(chan []db.StarRecord, 2)
	werr := make(chan error, 1)
	var writeTime time.Duration
	go func() {
		var err error
		writeTime, err = writeBatches(ctx, cancel, w, st, todo, spent)
		werr <- err
	}()
	var err error
	for {
		var reuse []db.StarRecord
		select {
		case reuse = <-spent:
		default:
		}
		recs, more, nerr := next(ctx, ce, reuse)
		if nerr != nil {
			err = nerr
			break
		}
		if !more {
			break
		}
		// Encoding the rows here, not on the writer's goroutine, takes
		// that work off the writer, which bounds a full run.
		enc, eerr := w.Encode(recs)
		if eerr != nil {
			err = eerr
			break
		}
		b := encodedBatch{recs, enc}
		select {
		case todo <- b: // the writer was waiting
			ce = &full
			continue
		default:
		}
		ce = &spare
		select {
		case todo <- b:
			continue
		case <-ctx.Done():
		}
		break
	}
	close(todo)
	if wErr := <-werr; wErr != nil {
		err = wErr // the cause of a cancellation seen by next
	}
	sum.addDuration("ledger", writeTime)
	if err == nil {
		err = ctx.Err()
	}
	return err
}

// writeBatches is computeAndWrite's writer: it writes each batch from todo
// in one transaction and offers it back on spent for reuse, until todo is
// closed. After its first error, which cancels ctx, it only drains todo.
// It returns that error and the time spent writing.
func writeBatches(ctx context.Context, cancel context.CancelCauseFunc, w *db.RunWriter, st Stage,
	todo <-chan encodedBatch, spent chan<- []db.StarRecord) (time.Duration, error) {
	var writeTime time.Duration
	done := 0
	var err error
	for b := range todo {
		if err == nil {
			t := time.Now()
			if err = w.AddEncoded(ctx, b.enc); err != nil {
				cancel(err)
			}
			writeTime += time.Since(t)
			done += len(b.recs)
			st.Set(done)
		}
		select {
		case spent <- b.recs:
		default:
		}
	}
	return writeTime, err
}

// encodedBatch is a batch of records and its rows, encoded for the ledger.
type encodedBatch struct {
	recs []db.StarRecord
	enc  *db.Encoded
}
