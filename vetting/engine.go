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
