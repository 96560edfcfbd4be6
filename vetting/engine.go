package vetting

import (
	"github.com/rs/zerolog"
)

// Engine runs the stages of a campaign. Its zero value logs nothing, shows
// no progress and uses every core.
type Engine struct {
	Log         zerolog.Logger
	Progress    Progress
	Workers     int    // 0: runtime.GOMAXPROCS(0)
	ToolVersion string // recorded with each run
}

// GCPercent is the garbage collector's target (GOGC) that the starvet
// binary runs with unless GOGC is set in its environment; Go's default is
// 100. A run allocates row values and Monte Carlo scratch at a high rate,
// and 200 took the 1M-star end-to-end benchmark (samples = 1000) from
// 25.4-27.2 s to 22.6-23.8 s, for a peak of 1.84 GB of memory against
// 1.36 GB (BENCHMARKS.md). BenchmarkRun1M runs with it too.
const GCPercent = 200
