package scenario

import "errors"

// Sentinel errors; returned errors wrap them.
var (
	ErrConfig   = errors.New("invalid scenario configuration")
	ErrTruth    = errors.New("invalid truth file")
	ErrSampling = errors.New("sampling did not converge")
)
