package vetting

// Progress reports the advance of the long stages: ingest, match, and the
// batches of stars through quality, Monte Carlo, tracing and the ledger
// (one stage counting stars, since a batch is written while the next is
// computed). The command line shows it as a bar on a terminal and as
// periodic log lines otherwise; a nil Progress shows nothing.
type Progress interface {
	Begin(stage string, total int) Stage
}

// Stage is one stage in progress.
type Stage interface {
	Set(done int) // items done so far; safe for concurrent use
	End()
}

type noStage struct{}

func (noStage) Set(int) {}
func (noStage) End()    {}

func begin(p Progress, stage string, total int) Stage {
	if p == nil {
		return noStage{}
	}
	return p.Begin(stage, total)
}
