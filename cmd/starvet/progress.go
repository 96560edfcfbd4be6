package main

import (
	"sync"
	"time"

	"github.com/rs/zerolog"
	"github.com/schollz/progressbar/v3"

	"starvet/vetting"
)

// progress shows the long stages: a bar on stderr when it is a terminal,
// a log line every few seconds otherwise, nothing with --quiet.
type progress struct {
	env *Env
}

func newProgress(env *Env) vetting.Progress {
	if env.Quiet {
		return nil
	}
	return &progress{env: env}
}

func (p *progress) Begin(stage string, total int) vetting.Stage {
	if p.env.StderrIsTTY {
		max := int64(total)
		if total <= 0 {
			max = -1
		}
		bar := progressbar.NewOptions64(max,
			progressbar.OptionSetWriter(p.env.Stderr),
			progressbar.OptionSetDescription(stage),
			progressbar.OptionShowCount(),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionClearOnFinish(),
		)
		return &barStage{bar: bar}
	}
	return &logStage{log: p.env.Log, stage: stage, total: total, start: time.Now(), last: time.Now()}
}

type barStage struct {
	mu  sync.Mutex
	bar *progressbar.ProgressBar
}

func (s *barStage) Set(done int) {
	s.mu.Lock()
	_ = s.bar.Set(done)
	s.mu.Unlock()
}

func (s *barStage) End() {
	s.mu.Lock()
	_ = s.bar.Finish()
	s.mu.Unlock()
}

// logStage writes a progress line at most every logEvery.
type logStage struct {
	mu          sync.Mutex
	log         zerolog.Logger
	stage       string
	total       int
	start, last time.Time
}

const logEvery = 5 * time.Second

func (s *logStage) Set(done int) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if time.Since(s.last) < logEvery {
		return
	}
	s.last = time.Now()
	s.log.Info().Str("stage", s.stage).Int("done", done).Int("total", s.total).Msg("progress")
}

func (s *logStage) End() {
	s.log.Debug().Str("stage", s.stage).Dur("elapsed", time.Since(s.start)).Msg("stage done")
}
